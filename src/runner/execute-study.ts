import type { WriteStepHook } from '../store/file-adapter.js';
import { availableParallelism } from 'node:os';
import { FolderCheckpointStore } from '../checkpoints/folder-store.js';
import type { CheckpointStore } from '../checkpoints/store.js';
import { hasSchedule } from '../core/schedule.js';
import type { PreparedData } from '../data/types.js';
import { studyStoppedError } from '../core/errors.js';
import { createSampler, plannedBudget, replay, secondGoalMeasure } from '../samplers/index.js';
import type { Job, JobOutcome, Sampler } from '../samplers/sampler.js';
import { withRepeats, type SamplerPlan } from '../samplers/plan.js';
import { repeatProgress } from '../core/repeats.js';
import { recordedRepeatSettings, runRepeats } from './repeats.js';
import type { Goal, TrialConfiguration } from '../core/configuration.js';
import { leaderOf, orientedLoss, rankTrials, type RankedTrial } from '../core/ranking.js';
import { studyBaselines } from './baselines.js';
import type { StudyStore } from '../store/study-store.js';
import type { StudyDocument } from '../store/types.js';
import type { TrialRecord } from '../core/trial.js';
import type { NetworkShape } from '../core/size.js';
import { ThreadTransport, type FaultInjector } from '../transports/threads/transport.js';
import { FoldsTransport } from '../transports/folds.js';
import type { TrialTransport } from '../transports/transport.js';
import type { SharedDataset, TrainJob, TrainResult } from '../core/job.js';
import { CheckpointKeeper } from './checkpoint-keeper.js';
import type { StudyObserver, StudyProgress } from './events.js';
import { TrialLifecycle, type JobFailure } from './lifecycle.js';
import { BatchedPersistence } from './persistence.js';
import { StudyDatasets } from './study-datasets.js';
import { StopControl, type Clock } from './stop-control.js';

/** After an interrupt, running jobs get this long to finish before they are cut off. */
export const GRACE_SECONDS = 10;

/** What a transport factory is told. */
export interface TransportContext {
  /** Threads of this machine the study asks for (`--threads`, the study's `threads`, else available cores). */
  threads: number;
}

export interface ExecuteOptions {
  /** Threads of this machine training jobs at once. @default the study's `threads`, else available cores */
  threads?: number;
  onEvent?: StudyObserver;
  /** Aborting stops handing out jobs; running jobs finish, then the study is saved as interrupted. */
  signal?: AbortSignal;
  /**
   * Where trials run: a factory called once per study.
   * @default worker threads on this machine ({@link ThreadTransport})
   * @example { transport: ({ threads }) => new ThreadTransport({ threads }) }
   */
  transport?: (context: TransportContext) => TrialTransport;
  /** Where checkpoints live between jobs. @default the run directory's `checkpoints/` ({@link FolderCheckpointStore}) */
  checkpoints?: CheckpointStore;
  /** Test-only: faults the default transport injects into trials (see `runner/faults.ts`). @default none */
  faults?: FaultInjector;
  /** Test-only: called at each step of every study-file write (see `runner/faults.ts`). @default none */
  onWriteStep?: WriteStepHook;
  /** Thread entry point of the default transport (tests and benchmarks use fixture entry points). */
  threadFile?: string;
  /** Seconds running jobs may take to finish after an interrupt. @default {@link GRACE_SECONDS} */
  graceSeconds?: number;
  /**
   * Minutes this session may start jobs (fractions allowed); then no job starts, running jobs finish
   * and the study is saved as stopped by its time limit (`resume` goes on). @default the study's `budget.minutes`, else none
   */
  minutes?: number;
  /** At the time limit, cut running jobs off at their next epoch (they run again on resume) instead of letting them finish. @default false */
  cutAtLimit?: boolean;
  /** Milliseconds clock the time limit is read from (tests move it instead of waiting). @default Date.now */
  clock?: Clock;
  /**
   * Whether each trial's time per row is measured: its jobs ask the thread (or worker) that trains them
   * to time the network after the job (`trainers/engine/row-timing.ts`) until a time is recorded.
   * @default true
   */
  timeRows?: boolean;
}

export interface StudyOutcome {
  dir: string;
  file: string;
  doc: StudyDocument;
  ranking: RankedTrial[];
}

/** The outcomes a study file records, one per (trial, rung) finished, for rebuilding a sampler. */
export function recordedOutcomes(trials: readonly TrialRecord[], goal: Goal): JobOutcome[] {
  const outcomes: JobOutcome[] = [];
  for (const trial of trials) {
    trial.rungScores.forEach((value, rung) => {
      // Early stopping can only have ended the trial in its last rung.
      const stopped = trial.stoppedEarly === true && rung === trial.rungScores.length - 1;
      // A rung whose result was flagged was told to the sampler as a bad one.
      const flagged = trial.flaggedRungs?.includes(rung) === true;
      outcomes.push({ trialId: trial.id, rung, loss: flagged ? null : orientedLoss(value ?? null, goal), ...(stopped ? { stopped: true } : {}) });
    });
  }
  return outcomes;
}

function defaultTransport(options: ExecuteOptions): (context: TransportContext) => TrialTransport {
  return ({ threads }) =>
    new ThreadTransport({
      threads,
      ...(options.faults ? { faults: options.faults } : {}),
      ...(options.threadFile ? { threadFile: options.threadFile } : {}),
    });
}

/**
 * Drive a study until its sampler is done or the signal aborts. A write that fails for lack of space
 * or permission stops the study with a one-line error (exit code 1) naming the path, the cause and the
 * resume command; every trial saved before it is kept and no trial is marked failed for it.
 */
export async function executeStudy(store: StudyStore, data: PreparedData, options: ExecuteOptions = {}, notes: readonly string[] = []): Promise<StudyOutcome> {
  try {
    return await drive(store, data, options, notes);
  } catch (error) {
    throw studyStoppedError(error, store.dir) ?? error;
  }
}

/** A settled job waiting to be saved and announced, with the study's progress at the moment it settled. */
interface Announced {
  record: TrialRecord;
  job: Job;
  progress: StudyProgress;
}

/** What one session of a study (a `run` or a `resume`) works with, built once by {@link openSession}. */
interface Session {
  store: StudyStore;
  options: ExecuteOptions;
  definition: StudyDocument['definition'];
  threads: number;
  emit: StudyObserver;
  /** Say something once per `key` (the message itself unless given). */
  note: (message: string, key?: string) => void;
  sampler: Sampler;
  planned: SamplerPlan;
  /** Jobs that were running when the study last stopped: they start first. */
  queue: Job[];
  lifecycle: TrialLifecycle;
  keeper: CheckpointKeeper;
  persistence: BatchedPersistence<Announced>;
  /** The study's own data set and one per other preprocessing choice met so far. */
  datasets: StudyDatasets;
  stop: StopControl;
  /** Running jobs by trial id. */
  running: Map<number, Promise<void>>;
  /** Worker-seconds of the jobs that brought a result. */
  busySeconds: number;
  /** Jobs that brought a result in this session, and the epochs trained before it began. */
  jobsEnded: number;
  epochsAtStart: number;
}

/**
 * Drive a study until its sampler is done, the signal aborts or its time limit passes. Trials already
 * in the store (a resumed study) are replayed into a fresh sampler first; jobs that were running when
 * the study stopped run again, from their checkpoint when it stands where they started, else from
 * epoch 0 (training is deterministic, so the result is the same).
 */
async function drive(store: StudyStore, data: PreparedData, options: ExecuteOptions, resumeNotes: readonly string[]): Promise<StudyOutcome> {
  const session = await openSession(store, data, options);
  const resumed = store.doc.trials.length > 0;
  const started = session.stop.elapsedMs;
  store.doc.state = 'running';
  await store.save();
  announceStart(session, resumed, resumeNotes);
  const inner = (options.transport ?? defaultTransport(options))({ threads: session.threads });
  // k-fold: every job runs once per fold on the inner transport; the run loop sees one job and the fold mean.
  const transport = data.folds ? new FoldsTransport(inner, (dataset) => session.datasets.foldsOf(dataset)) : inner;
  try {
    await transport.addDataset(session.datasets.study);
    await dispatch(session, transport);
    await session.persistence.flush();
    if (!session.stop.stopping) await repeatRuns(session, transport);
  } finally {
    session.stop.dispose();
    await transport.close();
  }
  return finish(session, (session.stop.elapsedMs - started) / 1000);
}

/** The repeat runs after the search (none in studies without the setting): counted in the session's busy time. */
async function repeatRuns(session: Session, transport: TrialTransport): Promise<void> {
  const { store, datasets, stop, emit } = session;
  const datasetIdFor = (configuration: TrialConfiguration): Promise<string> => datasets.idFor(configuration, (dataset) => transport.addDataset(dataset));
  const context = { store, datasetIdFor, stop, emit, progress: () => progressOf(session) };
  session.busySeconds += await runRepeats(context, transport, recordedRepeatSettings(session.definition), session.planned.repeats);
}

/** The study's progress: the search's trials and the repeat runs recorded. */
function progressOf(session: Pick<Session, 'lifecycle' | 'store'>): StudyProgress {
  const search = session.lifecycle.progress();
  const repeats = repeatProgress(session.store.doc.repeats);
  return { ...search, jobsDone: search.jobsDone + repeats.jobs, epochsDone: search.epochsDone + repeats.epochs };
}

/** The sampler (with the recorded outcomes replayed), the trial lifecycle, checkpoints, saving and stopping. */
async function openSession(store: StudyStore, data: PreparedData, options: ExecuteOptions): Promise<Session> {
  const { definition, goal, trials } = store.doc;
  const emit = options.onEvent ?? (() => undefined);
  const datasets = new StudyDatasets(data);
  // Each configuration's network is sized by the inputs of the data prepared for its preprocessing choice.
  const shape = { inputs: datasets.study.inputCount, outputs: datasets.study.outputCount };
  const inputsFor = (configuration: TrialConfiguration): number => datasets.inputsFor(configuration);
  const maxWeights = definition.footprint?.maxWeights;
  const against = definition.footprint?.against;
  const shapeOf = (configuration: TrialConfiguration): NetworkShape => ({ ...shape, inputs: inputsFor(configuration) });
  const sampler = createSampler({
    ...definition,
    ...(maxWeights !== undefined ? { weightLimit: { maxWeights, shape, inputsFor } } : {}),
    ...(against !== undefined ? { secondGoal: secondGoalMeasure(against, shapeOf) } : {}),
  });
  // The search's plan and the repeat runs after it: the progress counters count both.
  const planned = withRepeats(plannedBudget(definition), recordedRepeatSettings(definition), definition.budget.maxEpochs, data.folds !== undefined);
  const queue = replay(sampler, recordedOutcomes(trials, goal), new Map(trials.map((t) => [t.id, t.configuration]))).pending;
  const lifecycle = new TrialLifecycle(store.doc, sampler, planned, { shapeOf, timeRows: options.timeRows ?? true });
  const keeper = new CheckpointKeeper(options.checkpoints ?? new FolderCheckpointStore(store.dir));
  const withCheckpoint = [...(await keeper.list()), ...trials.map((t) => t.id)];
  const persistence = new BatchedPersistence<Announced>(store, keeper, sampler, announcer(emit, goal), withCheckpoint, definition.keptNetworks);
  const minutes = options.minutes ?? definition.budget.minutes;
  const stop = new StopControl({
    ...(options.signal ? { signal: options.signal } : {}),
    graceSeconds: options.graceSeconds ?? GRACE_SECONDS,
    ...(minutes !== undefined ? { minutes } : {}),
    cutAtLimit: options.cutAtLimit ?? false,
    clock: options.clock ?? Date.now,
    onStop: (reason) => emit({ type: 'stopping', reason: reason === 'interrupted' ? 'interrupted' : `time limit of ${minutes} minute${minutes === 1 ? '' : 's'}` }),
  });
  const threads = options.threads ?? definition.threads ?? availableParallelism();
  // Before the first trial, so every trial is checked against them (a study from before baselines gets them on resume).
  store.doc.baselines ??= await studyBaselines(data, data.folds ? datasets.foldsOf(datasets.study) : [datasets.study], goal, definition.budget.maxEpochs, definition.sampler.seed);
  return { store, options, definition, threads, emit, note: noteOnce(emit), sampler, planned, queue, lifecycle, keeper, persistence, datasets, stop, running: new Map(), busySeconds: 0, jobsEnded: 0, epochsAtStart: lifecycle.progress().epochsDone + repeatProgress(store.doc.repeats).epochs };
}

/** After each save: one `trial-finished` event per saved job, with the ranking's leader at that moment. */
function announcer(emit: StudyObserver, goal: Goal): (items: Announced[], ranking: RankedTrial[]) => void {
  return (items, ranking) => {
    // Each job with the counts of the moment it settled, so the counters on each line are its own.
    for (const { record, job, progress } of items) {
      emit({ type: 'trial-finished', trial: record, job, best: leaderOf(ranking.map((r) => r.trial), goal), finishedTrials: progress.endedTrials, progress });
    }
  };
}

function noteOnce(emit: StudyObserver): (message: string, key?: string) => void {
  const said = new Set<string>();
  return (message, key = message) => {
    if (said.has(key)) return;
    said.add(key);
    emit({ type: 'note', message });
  };
}

function announceStart(session: Session, resumed: boolean, resumeNotes: readonly string[]): void {
  const { store, emit, threads, planned, lifecycle, note, datasets } = session;
  const shape = { inputs: datasets.study.inputCount, outputs: datasets.study.outputCount };
  emit({ type: 'study-started', name: store.doc.name, dir: store.dir, threads, plannedTrials: planned.trials, plannedEpochs: planned.epochs, resumed, progress: progressOf(session), shape });
  for (const message of [...store.notes, ...resumeNotes]) note(message);
}

/** Hand out jobs up to the transport's capacity until the sampler is done or the study stops, then wait for the running ones. */
async function dispatch(session: Session, transport: TrialTransport): Promise<void> {
  const { running, queue, sampler, stop, persistence } = session;
  for (;;) {
    let state: 'wait' | 'done' | undefined;
    while (!stop.stopping && running.size < transport.capacity) {
      const next = queue.shift() ?? sampler.next();
      if (typeof next === 'string') {
        state = next;
        break;
      }
      await startJob(session, transport, next);
    }
    if (running.size === 0) {
      if (stop.stopping || state === 'done') return;
      throw new Error('the sampler is waiting but no job is running');
    }
    await Promise.race(running.values());
    if (persistence.error) throw persistence.error;
  }
}

/** Start a job: continue from the trial's checkpoint where the job asks for one and it stands there, else from epoch 0. */
async function startJob(session: Session, transport: TrialTransport, proposed: Job): Promise<void> {
  const { keeper, lifecycle, emit, running } = session;
  const checkpoint = proposed.fromEpoch > 0 ? await keeper.at(proposed.trialId, proposed.fromEpoch) : undefined;
  const job = proposed.fromEpoch > 0 && !checkpoint ? fromScratch(session, proposed) : proposed;
  const datasetId = await session.datasets.idFor(job.configuration, (dataset) => transport.addDataset(dataset));
  const record = lifecycle.started(job, checkpoint !== undefined);
  emit({ type: 'job-started', job, fromCheckpoint: checkpoint !== undefined });
  const abort = jobAbort(session);
  const done = transport
    .run(trainJobOf(session, job, record, datasetId, checkpoint), (report) => emit({ type: 'epoch', report }), abort.signal)
    .then(
      (result) => settleResult(session, job, result),
      (error: unknown) => settleFailure(session, transport, job, abort.timedOut(), error),
    )
    .finally(() => {
      abort.dispose();
      if (running.get(job.trialId) === done) running.delete(job.trialId);
    });
  running.set(job.trialId, done);
}

/** The job from epoch 0, said once: its checkpoint is missing. */
function fromScratch(session: Session, job: Job): Job {
  session.note(
    `trial ${job.trialId} has no checkpoint at epoch ${job.fromEpoch}; trials whose checkpoint is missing are trained again from epoch 0 (training is deterministic, so the results are the same)`,
    'missing checkpoint',
  );
  return { ...job, fromEpoch: 0 };
}

/** One controller per job: ended by the study's cut-off or by the trial's time limit. */
function jobAbort(session: Session): { signal: AbortSignal; timedOut: () => boolean; dispose: () => void } {
  const abort = new AbortController();
  const cutOff = session.stop.cutOff.signal;
  const onCutOff = (): void => abort.abort();
  cutOff.addEventListener('abort', onCutOff, { once: true });
  let timedOut = false;
  const seconds = session.definition.trialTimeoutSeconds;
  const timer = seconds
    ? setTimeout(() => {
        timedOut = true;
        abort.abort();
      }, seconds * 1000)
    : undefined;
  return {
    signal: abort.signal,
    timedOut: () => timedOut,
    dispose: () => {
      clearTimeout(timer);
      cutOff.removeEventListener('abort', onCutOff);
    },
  };
}

/** What the transport is asked to train for a job. */
function trainJobOf(session: Session, job: Job, record: TrialRecord, datasetId: string, checkpoint: Uint8Array | undefined): TrainJob {
  const { definition, store } = session;
  return {
    trialId: job.trialId,
    seed: record.seed,
    configuration: job.configuration,
    datasetId,
    fromEpoch: job.fromEpoch,
    toEpoch: job.toEpoch,
    ...(hasSchedule(job.configuration) ? { maxEpochs: definition.budget.maxEpochs } : {}),
    ...(definition.earlyStopping ? { earlyStopping: { rule: definition.earlyStopping, goal: store.doc.goal } } : {}),
    ...(checkpoint ? { checkpoint } : {}),
    ...(session.lifecycle.wantsRowTime(record) ? { timeRows: true } : {}),
  };
}

function settleResult(session: Session, job: Job, result: TrainResult): void {
  const { keeper, persistence, lifecycle } = session;
  session.busySeconds += result.workerSeconds;
  if (result.checkpoint) {
    keeper.put(job.trialId, result.checkpoint);
    persistence.checkpointed(job.trialId);
  }
  // A copy: by the time the save lands and the outcome is announced, the trial may be running again.
  const record = { ...lifecycle.succeeded(job, result) };
  const progress = progressOf(session);
  persistence.queue({ record, job, progress });
  forecastTimeLimit(session, progress.epochsDone);
}

/** Jobs ended in a session before its pace is trusted to forecast where the time limit cuts the plan. Common practice (no source). */
const FORECAST_AFTER_JOBS = 3;

/**
 * With a time limit, once a few jobs have ended: when the limit will stop the study before its plan
 * is done at the pace measured so far, say once how far the plan will get.
 */
function forecastTimeLimit(session: Session, epochsDone: number): void {
  const { stop, planned } = session;
  const remaining = stop.remainingMs;
  session.jobsEnded += 1;
  if (remaining === undefined || session.jobsEnded !== FORECAST_AFTER_JOBS) return;
  const trainedNow = epochsDone - session.epochsAtStart;
  const elapsed = stop.elapsedMs;
  if (trainedNow <= 0 || elapsed <= 0) return;
  const reach = Math.floor(epochsDone + (trainedNow * remaining) / elapsed);
  if (reach >= planned.epochs) return;
  const perMinute = (trainedNow * 60_000) / elapsed;
  const shape = planned.brackets > 1 ? ` (${planned.brackets} brackets of ${planned.rungs} rungs at most)` : planned.rungs > 1 ? ` (${planned.rungs} rungs)` : '';
  session.note(
    `at the pace so far (${perMinute.toFixed(1)} epochs a minute), the time limit stops the study near epoch ${reach} of the ${planned.epochs} planned${shape}, about ${Math.round((100 * reach) / planned.epochs)} % of its plan; resume with a longer --minutes to go on`,
  );
}

function settleFailure(session: Session, transport: TrialTransport, job: Job, timedOut: boolean, error: unknown): Promise<void> | undefined {
  const failure: JobFailure = session.stop.cutOff.signal.aborted
    ? { kind: 'cut-off' }
    : timedOut
      ? { kind: 'timed-out' }
      : { kind: 'error', message: error instanceof Error ? error.message : String(error) };
  const next = session.lifecycle.failed(job, failure);
  if (next === 'retry') return startJob(session, transport, job); // the same job again, from the same checkpoint
  if (next === 'ended') session.persistence.queue({ record: { ...session.lifecycle.record(job.trialId) }, job, progress: progressOf(session) });
  return undefined;
}

/** Record the end state and the totals, save, and tell the observer. */
async function finish(session: Session, wallSeconds: number): Promise<StudyOutcome> {
  const { store, lifecycle, stop, threads, persistence, emit } = session;
  const doc = store.doc;
  if (stop.reason === undefined) lifecycle.endAll();
  doc.state = stop.reason ?? 'finished';
  doc.totals = {
    epochsTrained: doc.trials.reduce((sum, t) => sum + t.epochsTrained, 0),
    threadUtilisation: wallSeconds > 0 ? Math.min(1, session.busySeconds / (threads * wallSeconds)) : 0,
    wallSeconds,
    threads,
    busySeconds: session.busySeconds,
  };
  await persistence.saveNow();
  const ranking = rankTrials(doc.trials, doc.goal);
  emit({ type: 'study-finished', doc, ranking });
  return { dir: store.dir, file: store.file, doc, ranking };
}
