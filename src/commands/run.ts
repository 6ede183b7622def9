import { dataProgressObserver } from '../report/data-progress.js';
import { progressObserver } from '../report/progress.js';
import { rankingTable } from '../report/ranking-table.js';
import { runStudy, type StudyOutcome } from '../runner/run-study.js';
import { loadStudy } from '../study/load.js';
import { resolveObjective } from '../study/definition.js';
import { studySummary } from '../report/summary.js';
import { noResultError } from '../study/trial-status.js';

export interface RunCommandOptions {
  definition: string;
  out?: string;
  workers?: number;
  force?: boolean;
  top?: number;
  /** Where progress and the final table go. @default process.stdout */
  stdout?: NodeJS.WritableStream;
  /** Where data-loading progress and notes on the reading go. @default process.stderr */
  stderr?: NodeJS.WritableStream;
  signal?: AbortSignal;
}

/** `rungwise run`: launch a study, show progress, print the top configurations and the study file's path. */
export async function run(options: RunCommandOptions): Promise<StudyOutcome> {
  const stdout = options.stdout ?? process.stdout;
  // Validate before anything is drawn, so bad input gives only its one-line error.
  const study = await loadStudy(options.definition);
  const objective = resolveObjective(study.definition);
  const outcome = await runStudy(study, {
    ...(options.out !== undefined ? { out: options.out } : {}),
    ...(options.workers !== undefined ? { workers: options.workers } : {}),
    ...(options.force !== undefined ? { force: options.force } : {}),
    ...(options.signal ? { signal: options.signal } : {}),
    onEvent: progressObserver({ objective, stream: stdout }),
    onDataEvent: dataProgressObserver({ stream: options.stderr ?? process.stderr }),
  });
  stdout.write(`\n${rankingTable(outcome.ranking.slice(0, options.top ?? 10), objective)}\n\n`);
  stdout.write(`${studySummary(outcome.doc, outcome.file)}\n`);
  const noResult = outcome.doc.state === 'finished' ? noResultError(outcome.doc.trials, outcome.file) : undefined;
  if (noResult) throw noResult;
  return outcome;
}
