/**
 * What `run` and `resume` take alike (the threads, the queue, the time limit, interruption and the
 * test hooks) and how they hand it to the runner, written once.
 */
import type { FaultInjector } from '../transports/threads/transport.js';
import type { WriteStepHook } from '../store/file-adapter.js';
import type { StudyDocument } from '../store/types.js';
import type { Goal } from '../core/configuration.js';
import type { RunOptions } from '../runner/run-study.js';
import { dataObserver, studyObserver, type ProgressTarget } from './observe.js';
import { oversubscriptionWarning } from './oversubscription.js';
import type { QueueFlags, QueueRun } from './queue.js';

export interface SessionOptions extends ProgressTarget, QueueFlags {
  /** Threads of this machine training jobs at once. @default the study's `threads`, else available cores; with `queue`, 0 (only `rungwise worker` processes train) */
  threads?: number;
  /** Aborting stops starting jobs; running ones finish and the study is saved as interrupted. */
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

/** The runner's options for one session: threads or the queue, the observers, the time limit, the hooks. */
export type SessionRunnerOptions = Pick<RunOptions, 'threads' | 'signal' | 'transport' | 'onEvent' | 'faults' | 'onWriteStep' | 'onDataEvent' | 'minutes' | 'cutAtLimit' | 'clock'>;

/** Warn (through `onWarning`) when the study would run more threads than the machine has cores. */
export function warnIfCrowded(options: SessionOptions, definition: StudyDocument['definition']): void {
  const threads = options.threads ?? definition.threads;
  const crowded = options.queue === undefined && threads !== undefined ? oversubscriptionWarning(threads) : undefined;
  if (crowded) options.onWarning?.(crowded);
}

/** What the runner is given for this session, from the command's options and its queue. */
export function sessionRunnerOptions(options: SessionOptions, queue: QueueRun, definition: StudyDocument['definition'], goal: Goal): SessionRunnerOptions {
  const onEvent = studyObserver(options, definition, goal);
  const onDataEvent = dataObserver(options);
  return {
    ...(options.queue === undefined && options.threads !== undefined ? { threads: options.threads } : {}),
    ...(queue.signal ? { signal: queue.signal } : {}),
    ...(queue.transport ? { transport: queue.transport } : {}),
    ...(onEvent ? { onEvent } : {}),
    ...(options.faults ? { faults: options.faults } : {}),
    ...(options.onWriteStep ? { onWriteStep: options.onWriteStep } : {}),
    ...(onDataEvent ? { onDataEvent } : {}),
    ...(options.minutes !== undefined ? { minutes: options.minutes } : {}),
    ...(options.cutAtLimit ? { cutAtLimit: true } : {}),
    ...(options.clock ? { clock: options.clock } : {}),
  };
}
