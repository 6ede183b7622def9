import type { FaultInjector } from '../transports/threads/transport.js';
import type { WriteStepHook } from '../store/file-adapter.js';
import path from 'node:path';
import { runStudy, type StudyOutcome } from '../runner/run-study.js';
import { resolveGoal, type StudyDefinitionInput } from '../study/definition.js';
import { loadStudy, studyFromObject } from '../study/load.js';
import { dataObserver, studyObserver, type ProgressTarget } from './observe.js';
import { oversubscriptionWarning } from './oversubscription.js';
import { queueRun, settleQueued, type QueueFlags } from './queue.js';

export interface RunCommandOptions extends ProgressTarget, QueueFlags {
  /** A study definition file (JSON), or the definition itself as an object. */
  definition: string | StudyDefinitionInput;
  /** For a definition object: the folder its `data.csv` is relative to. @default the current directory */
  baseDir?: string;
  /** Run directory. @default `runs/<study name>` */
  out?: string;
  /** Worker threads. @default the study's `workers`, else available cores */
  workers?: number;
  /** Replace a run directory that already holds a study. */
  force?: boolean;
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

/**
 * `rungwise run`: validate the definition, run the study (with a progress display where one is
 * asked for), and return the saved study and its ranking (the CLI prints them).
 * @throws UserError for a bad definition or CSV, before anything is written.
 * @example
 * import { run } from 'rungwise';
 * const { ranking, file } = await run({
 *   definition: { name: 'pumps', data: { csv: 'pumps.csv', target: 'fails', task: 'binary' }, space: { ... }, budget: { trials: 8, maxEpochs: 5 }, sampler: { kind: 'random', seed: 1 } },
 *   out: 'runs/pumps',
 *   progress: process.stderr,
 *   onEvent: (event) => { if (event.type === 'trial-finished') console.log(event.trial.id, event.trial.score); },
 * });
 */
export async function run(options: RunCommandOptions): Promise<StudyOutcome> {
  // Validate before anything is drawn, so bad input gives only its one-line error.
  const study =
    typeof options.definition === 'string'
      ? await loadStudy(options.definition)
      : studyFromObject(options.definition, path.resolve(options.baseDir ?? '.'));
  const goal = resolveGoal(study.definition);
  const workers = options.workers ?? study.definition.workers;
  const crowded = options.queue === undefined && workers !== undefined ? oversubscriptionWarning(workers) : undefined;
  if (crowded) options.onWarning?.(crowded);
  const onEvent = studyObserver(options, study.definition, goal);
  const onDataEvent = dataObserver(options);
  const dir = path.resolve(options.out ?? path.join('runs', study.definition.name));
  const queue = queueRun(options, { name: study.definition.name, dir, fresh: true }, options.stderr ?? process.stderr, options.signal);
  return settleQueued(queue, dir, runStudy(study, {
    ...(options.out !== undefined ? { out: options.out } : {}),
    ...(options.workers !== undefined ? { workers: options.workers } : {}),
    ...(options.force !== undefined ? { force: options.force } : {}),
    ...(queue.signal ? { signal: queue.signal } : {}),
    ...(queue.transport ? { transport: queue.transport } : {}),
    ...(onEvent ? { onEvent } : {}),
    ...(options.faults ? { faults: options.faults } : {}),
    ...(options.onWriteStep ? { onWriteStep: options.onWriteStep } : {}),
    ...(onDataEvent ? { onDataEvent } : {}),
    ...(options.minutes !== undefined ? { minutes: options.minutes } : {}),
    ...(options.cutAtLimit ? { cutAtLimit: true } : {}),
    ...(options.clock ? { clock: options.clock } : {}),
  }));
}
