import type { FaultInjector } from '../transports/threads/transport.js';
import type { WriteStepHook } from '../store/file-adapter.js';
import path from 'node:path';
import { runStudy, type StudyOutcome } from '../runner/run-study.js';
import { isDataOnly, resolveGoal, type DataOnlyStudy, type StudyDefinitionInput } from '../study/definition.js';
import { DEFINITION_OBJECT_LABEL, loadStudy, readStudyJson, studyFromObject, type LoadedStudy } from '../study/load.js';
import { UserError } from '../core/errors.js';
import type { Task } from '../core/configuration.js';
import { dataOnlyDefinition, studyFromData } from './default-study.js';
import { dataObserver, studyObserver, type ProgressTarget } from './observe.js';
import { oversubscriptionWarning } from './oversubscription.js';
import { queueRun, settleQueued, type QueueFlags } from './queue.js';

export interface RunCommandOptions extends ProgressTarget, QueueFlags {
  /**
   * A study definition file (JSON), or the definition itself as an object; either may give only
   * `data` (a study from its data alone). With `target`: the path of a CSV instead.
   */
  definition: string | StudyDefinitionInput | DataOnlyStudy;
  /** With a CSV as `definition`: the column to predict; rungwise defines the rest of the study. */
  target?: string;
  /** With `target`: the task, when the target column leaves it ambiguous. @default inferred */
  task?: Task;
  /** With `target`: the seed of the train/validation/test split. @default 0 */
  splitSeed?: number;
  /** With `target`: configurations to try, in place of the default budget (give `maxEpochs` too). */
  trials?: number;
  /** With `target`: epochs per configuration at most, in place of the default budget (give `trials` too). */
  maxEpochs?: number;
  /** For a definition object: the folder its `data.csv` is relative to. @default the current directory */
  baseDir?: string;
  /** Run directory. @default `runs/<study name>` */
  out?: string;
  /** Threads of this machine training jobs at once. @default the study's `threads`, else available cores; with `queue`, 0 (only `rungwise worker` processes train) */
  threads?: number;
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
  const { study, fromData } = await resolveStudy(options);
  const goal = resolveGoal(study.definition);
  const threads = options.threads ?? study.definition.threads;
  const crowded = options.queue === undefined && threads !== undefined ? oversubscriptionWarning(threads) : undefined;
  if (crowded) options.onWarning?.(crowded);
  const onEvent = studyObserver(options, study.definition, goal);
  const onDataEvent = dataObserver(options);
  const dir = path.resolve(options.out ?? path.join('runs', study.definition.name));
  const queue = queueRun(options, { name: study.definition.name, dir, fresh: true }, options.stderr ?? process.stderr, options.signal);
  return settleQueued(queue, dir, () => runStudy(study, {
    ...(options.out !== undefined ? { out: options.out } : {}),
    ...(options.queue === undefined && options.threads !== undefined ? { threads: options.threads } : {}),
    ...(options.force !== undefined ? { force: options.force } : {}),
    ...(fromData ? { writeDefinition: true } : {}),
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

/** The study to run: a full definition as given, or one rungwise defines from the data (`fromData`). */
async function resolveStudy(options: RunCommandOptions): Promise<{ study: LoadedStudy; fromData: boolean }> {
  const { definition, target } = options;
  const out = options.out !== undefined ? { out: options.out } : {};
  const { trials, maxEpochs } = options;
  if (target === undefined && [options.task, options.splitSeed, trials, maxEpochs].some((value) => value !== undefined)) {
    throw new UserError('E_USAGE', `--task, --split-seed, --trials and --max-epochs go with a CSV and --target (rungwise run data.csv --target <column>); a definition file sets them itself`);
  }
  if ((trials === undefined) !== (maxEpochs === undefined)) throw new UserError('E_USAGE', `--trials and --max-epochs replace the default budget together; give both or neither`);
  if (typeof definition === 'string' && target !== undefined) {
    const raw = {
      ...dataOnlyDefinition(definition, target, { ...(options.task ? { task: options.task } : {}), ...(options.splitSeed !== undefined ? { splitSeed: options.splitSeed } : {}) }),
      ...(trials !== undefined && maxEpochs !== undefined ? { budget: { trials, maxEpochs } } : {}),
    };
    return { study: await studyFromData({ raw, label: definition, baseDir: process.cwd(), ...out }), fromData: true };
  }
  if (typeof definition === 'string') {
    if (/\.(csv|tsv)$/i.test(definition)) throw new UserError('E_USAGE', `${definition}: a CSV needs its target column: rungwise run ${definition} --target <column>`);
    const { raw, absolute } = await readStudyJson(definition);
    if (isDataOnly(raw)) return { study: await studyFromData({ raw, label: definition, baseDir: path.dirname(absolute), ...out }), fromData: true };
    return { study: await loadStudy(definition), fromData: false };
  }
  const baseDir = path.resolve(options.baseDir ?? '.');
  if (isDataOnly(definition)) return { study: await studyFromData({ raw: definition, label: DEFINITION_OBJECT_LABEL, baseDir, ...out }), fromData: true };
  return { study: studyFromObject(definition, baseDir), fromData: false };
}
