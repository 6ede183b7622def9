import path from 'node:path';
import { UserError } from '../core/errors.js';
import { compareDetailsText, comparedStudy, compareTableText, type ComparedStudy } from '../plot/compare-answers.js';
import { buildComparisonReport, comparisonCharts, distinctNames } from '../plot/comparison.js';
import { StudyStore, studyFilePath } from '../store/study-store.js';
import type { Goal } from '../core/configuration.js';
import { goalInWords } from '../core/ranking.js';
import { renderCharts, writeReportFolder } from './plot.js';

export interface CompareOptions {
  /** Two or more run directories. */
  dirs: readonly string[];
  /** Folder for the comparison report. @default `<first dir>/comparison` */
  out?: string;
}

/** The result of `compare`: the answers per study, the narrow table, the answers in full, the report's files. */
export interface CompareResult {
  goal: Goal;
  studies: ComparedStudy[];
  /** One row per answer, one column per study, a few words each. */
  table: string;
  /** Every answer in full, question by question (`--details`). */
  details: string;
  files: string[];
}

/**
 * `rungwise compare`: the report's questions answered side by side for several studies, as a
 * terminal table, as data and as a report folder (charts and `report.html`).
 * Reads only the study files. The studies must be ranked by the same goal.
 */
export async function compare(options: CompareOptions): Promise<CompareResult> {
  if (options.dirs.length < 2) throw new UserError('E_COMPARE_ARGS', `compare needs at least two run directories, got ${options.dirs.length}`);
  const studies = distinctNames(await Promise.all(options.dirs.map((dir) => StudyStore.read(dir))));
  const first = studies[0]!;
  studies.forEach((study, i) => {
    if (study.goal.metric !== first.goal.metric || study.goal.better !== first.goal.better) {
      throw new UserError(
        'E_COMPARE_GOAL',
        `${studyFilePath(options.dirs[i]!)}: ranked by ${goalInWords(study.goal)}, but ${studyFilePath(options.dirs[0]!)} by ${goalInWords(first.goal)}; compare needs studies ranked by the same goal`,
      );
    }
  });
  const { charts, digests, importances } = comparisonCharts(studies);
  const rendered = await renderCharts(charts);
  const out = path.resolve(options.out ?? path.join(options.dirs[0]!, 'comparison'));
  const files = await writeReportFolder(out, charts, rendered, buildComparisonReport(studies, digests, rendered));
  const compared = studies.map((study, i) => comparedStudy(study, path.resolve(options.dirs[i]!), digests[i]!, importances[i]));
  return { goal: first.goal, studies: compared, table: compareTableText(compared, first.goal), details: compareDetailsText(compared, first.goal), files };
}
