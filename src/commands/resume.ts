import type { FaultInjector } from '../transports/threads/transport.js';
import type { WriteStepHook } from '../store/file-adapter.js';
import path from 'node:path';
import { resumeStudy, type ResumeOutcome } from '../runner/resume-study.js';
import { StudyStore } from '../store/study-store.js';
import { dataObserver, studyObserver, type ProgressTarget } from './observe.js';
import { oversubscriptionWarning } from './oversubscription.js';
import { queueRun, settleQueued, type QueueFlags } from './queue.js';

export interface ResumeCommandOptions extends ProgressTarget, QueueFlags {
  /** Run directory holding `study.json`. */
  dir: string;
  /** Threads of this machine training jobs at once. @default the study's `threads`, else available cores; with `queue`, 0 (only `rungwise worker` processes train) */
  threads?: number;
  /** Go on although the CSV changed since the study started (the study file records it). @default false */
  allowChangedData?: boolean;
  signal?: AbortSignal;
  /** Where notes of the queue go. @default process.stderr */
  stderr?: NodeJS.WritableStream;
  /** Minutes this session may start jobs (fractions allowed). @default the study's `budget.minutes`, else no limit */
  minutes?: number;
  /** At the time limit, cut running jobs off instead of letting them finish. @default false */
  cutAtLimit?: boolean;
  /** Milliseconds clock the time limit is read from. @default Date.now */
  clock?: () => number;
  /** Test-only: faults to inject into trials (see `runner/faults.ts`). @default none */
  faults?: FaultInjector;
  /** Test-only: called at each step of every study-file write (see `runner/faults.ts`). @default none */
  onWriteStep?: WriteStepHook;
}

/**
 * `rungwise resume`: continue an interrupted study (finished trials are kept). A finished study is
 * returned as it is, with `alreadyFinished` set.
 */
export async function resume(options: ResumeCommandOptions): Promise<ResumeOutcome> {
  const saved = await StudyStore.read(options.dir);
  const threads = options.threads ?? saved.definition.threads;
  const crowded = options.queue === undefined && threads !== undefined ? oversubscriptionWarning(threads) : undefined;
  if (crowded) options.onWarning?.(crowded);
  const onEvent = studyObserver(options, saved.definition, saved.goal);
  const onDataEvent = dataObserver(options);
  const dir = path.resolve(options.dir);
  const queue = queueRun(options, { name: saved.name, dir, fresh: false }, options.stderr ?? process.stderr, options.signal);
  return settleQueued(queue, dir, () => resumeStudy(options.dir, {
    ...(options.queue === undefined && options.threads !== undefined ? { threads: options.threads } : {}),
    ...(queue.signal ? { signal: queue.signal } : {}),
    ...(queue.transport ? { transport: queue.transport } : {}),
    ...(options.allowChangedData ? { allowChangedData: true } : {}),
    ...(onEvent ? { onEvent } : {}),
    ...(options.faults ? { faults: options.faults } : {}),
    ...(options.onWriteStep ? { onWriteStep: options.onWriteStep } : {}),
    ...(onDataEvent ? { onDataEvent } : {}),
    ...(options.minutes !== undefined ? { minutes: options.minutes } : {}),
    ...(options.cutAtLimit ? { cutAtLimit: true } : {}),
    ...(options.clock ? { clock: options.clock } : {}),
  }));
}
