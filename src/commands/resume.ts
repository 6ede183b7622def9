import path from 'node:path';
import { progressObserver } from '../report/progress.js';
import { rankingTable } from '../report/ranking-table.js';
import { studySummary } from '../report/summary.js';
import { resumeStudy, type ResumeOutcome } from '../runner/resume-study.js';
import { StudyStore } from '../store/study-store.js';
import { noResultError } from '../study/trial-status.js';
import { queueRun, type QueueFlags } from './queue.js';

export interface ResumeCommandOptions extends QueueFlags {
  dir: string;
  workers?: number;
  top?: number;
  stdout?: NodeJS.WritableStream;
  signal?: AbortSignal;
  /** Where notes of the queue go. @default process.stderr */
  stderr?: NodeJS.WritableStream;
}

/** `rungwise resume`: continue an interrupted study; a finished one is reported as such. */
export async function resume(options: ResumeCommandOptions): Promise<ResumeOutcome> {
  const stdout = options.stdout ?? process.stdout;
  const { objective, name } = await StudyStore.read(options.dir);
  const dir = path.resolve(options.dir);
  const queue = queueRun(options, { name, dir, fresh: false }, options.stderr ?? process.stderr, options.signal);
  const outcome = await resumeStudy(options.dir, {
    ...(options.workers !== undefined ? { workers: options.workers } : {}),
    ...(queue.signal ? { signal: queue.signal } : {}),
    ...(queue.transport ? { transport: queue.transport } : {}),
    onEvent: progressObserver({ objective, stream: stdout }),
  }).catch((error: unknown) => {
    queue.check(dir);
    throw error;
  });
  queue.check(dir);
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
