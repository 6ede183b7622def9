import path from 'node:path';
import { UserError } from '../core/errors.js';
import { buildComparisonReport, comparisonCharts, comparisonTable, distinctNames } from '../plot/comparison.js';
import { textTable } from '../report/format.js';
import { StudyStore, studyFilePath } from '../store/study-store.js';
import { goalInWords } from '../core/ranking.js';
import { renderCharts, writeReportFolder } from './plot.js';

export interface CompareOptions {
  /** Two or more run directories. */
  dirs: readonly string[];
  /** Folder for the comparison report. @default `<first dir>/comparison` */
  out?: string;
}

/**
 * `rungwise compare`: the report's questions answered side by side for several studies, as a
 * terminal table and as a report folder (charts and `comparison.html`... written as `report.html`).
 * Reads only the study files. The studies must be ranked by the same goal.
 */
export async function compare(options: CompareOptions): Promise<{ table: string; files: string[] }> {
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
  const files = await writeReportFolder(out, charts, rendered, buildComparisonReport(studies, digests, rendered, importances));
  const { header, rows } = comparisonTable(digests);
  return { table: textTable(header, rows.map((row) => header.map((h) => row[h] ?? ''))), files };
}
