import { rankTrials, type RankedTrial } from '../core/ranking.js';
import { StudyStore, studyFilePath } from '../store/study-store.js';
import type { StudyDocument } from '../store/types.js';

export interface RankingCommandOptions {
  /** Run directory holding `study.json`. */
  dir: string;
}

export interface RankingResult {
  doc: StudyDocument;
  ranking: RankedTrial[];
  /** The study file read. */
  file: string;
}

/**
 * `rungwise ranking`: the study's ranking from the saved study file alone.
 * @example
 * import { ranking } from 'rungwise';
 * const { ranking: ranked } = await ranking({ dir: 'runs/demo' });
 * console.log(ranked[0]?.trial.configuration);
 */
export async function ranking(options: RankingCommandOptions): Promise<RankingResult> {
  const doc = await StudyStore.read(options.dir);
  return { doc, ranking: rankTrials(doc.trials, doc.goal), file: studyFilePath(options.dir) };
}
