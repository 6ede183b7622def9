import { rankingJson, rankingTable } from '../report/ranking-table.js';
import { rankTrials } from '../study/objective.js';
import { StudyStore, studyFilePath } from '../store/study-store.js';

export interface RankingCommandOptions {
  dir: string;
  top?: number;
  json?: boolean;
}

/** `rungwise ranking`: the ranking from the saved study file alone, as a table or JSON. */
export async function ranking(options: RankingCommandOptions): Promise<string> {
  const doc = await StudyStore.read(options.dir);
  const ranked = rankTrials(doc.trials, doc.objective).slice(0, options.top ?? 10);
  if (options.json) return JSON.stringify({ study: doc.name, state: doc.state, file: studyFilePath(options.dir), ...(rankingJson(ranked, doc.objective) as object) }, null, 2);
  const header = `study ${doc.name} (${doc.state}), ${doc.trials.length} trials, ranked by ${doc.objective.metric} (${doc.objective.direction})`;
  return `${header}\n\n${rankingTable(ranked, doc.objective)}`;
}
