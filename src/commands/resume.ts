import { dataProgressObserver } from '../report/data-progress.js';
import { progressObserver } from '../report/progress.js';
import { rankingTable } from '../report/ranking-table.js';
import { studySummary } from '../report/summary.js';
import { resumeStudy, type ResumeOutcome } from '../runner/resume-study.js';
import { StudyStore } from '../store/study-store.js';
import { noResultError } from '../study/trial-status.js';

export interface ResumeCommandOptions {
  dir: string;
  workers?: number;
  top?: number;
  stdout?: NodeJS.WritableStream;
  /** Where data-loading progress and notes on the reading go. @default process.stderr */
  stderr?: NodeJS.WritableStream;
  signal?: AbortSignal;
}

/** `rungwise resume`: continue an interrupted study; a finished one is reported as such. */
export async function resume(options: ResumeCommandOptions): Promise<ResumeOutcome> {
  const stdout = options.stdout ?? process.stdout;
  const { objective } = await StudyStore.read(options.dir);
  const outcome = await resumeStudy(options.dir, {
    ...(options.workers !== undefined ? { workers: options.workers } : {}),
    ...(options.signal ? { signal: options.signal } : {}),
    onEvent: progressObserver({ objective, stream: stdout }),
    onDataEvent: dataProgressObserver({ stream: options.stderr ?? process.stderr }),
  });
  if (outcome.alreadyFinished) {
    stdout.write(`study ${outcome.doc.name} is already finished; nothing to resume (see \`rungwise ranking ${outcome.dir}\`)\n`);
    return outcome;
  }
  stdout.write(`\n${rankingTable(outcome.ranking.slice(0, options.top ?? 10), objective)}\n\n`);
  stdout.write(`${studySummary(outcome.doc, outcome.file)}\n`);
  const noResult = outcome.doc.state === 'finished' ? noResultError(outcome.doc.trials, outcome.file) : undefined;
  if (noResult) throw noResult;
  return outcome;
}
