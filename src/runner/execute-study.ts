import { setMaxListeners } from 'node:events';
import { availableParallelism } from 'node:os';
import { FolderCheckpointStore } from '../checkpoints/folder-store.js';
import type { CheckpointStore } from '../checkpoints/store.js';
import { datasetId } from '../data/dataset-id.js';
import { hasSchedule } from '../core/schedule.js';
import { toSharedDataset } from '../data/index.js';
import type { PreparedData } from '../data/types.js';
import { studyStoppedError } from '../core/errors.js';
import { createSampler, plannedBudget, replay } from '../samplers/index.js';
import type { Job, JobOutcome } from '../samplers/sampler.js';
import type { Goal } from '../core/configuration.js';
import { orientedLoss, rankTrials, type RankedTrial } from '../core/ranking.js';
import type { StudyStore } from '../store/study-store.js';
import type { StudyDocument } from '../store/types.js';
import type { TrialRecord } from '../core/trial.js';
import { ThreadTransport, type FaultInjector } from '../transports/threads/transport.js';
import { FoldsTransport } from '../transports/folds.js';
import type { TrialTransport } from '../transports/transport.js';
import type { SharedDataset } from '../core/job.js';
import { CheckpointKeeper } from './checkpoint-keeper.js';
import type { StudyObserver } from './events.js';
import { TrialLifecycle, type JobFailure } from './lifecycle.js';
import { BatchedPersistence } from './persistence.js';

/** After an interrupt, running jobs get this long to finish before they are cut off. */
export const GRACE_SECONDS = 10;

/** What a transport factory is told. */
export interface TransportContext {
  /** Jobs at once the study asks for (`--workers`, the study's `workers`, else available cores). */
  workers: number;
}

export interface ExecuteOptions {
  /** Jobs at once. @default the study's `workers`, else available cores */
  workers?: number;
  onEvent?: StudyObserver;
  /** Aborting stops handing out jobs; running jobs finish, then the study is saved as interrupted. */
  signal?: AbortSignal;
  /**
   * Where trials run: a factory called once per study.
   * @default worker threads on this machine ({@link ThreadTransport})
   * @example { transport: ({ workers }) => new ThreadTransport({ threads: workers }) }
   */
  transport?: (context: TransportContext) => TrialTransport;
  /** Where checkpoints live between jobs. @default the run directory's `checkpoints/` ({@link FolderCheckpointStore}) */
  checkpoints?: CheckpointStore;
  /** Test-only: faults the default transport injects into trials (see `runner/faults.ts`). @default none */
  faults?: FaultInjector;
  /** Worker entry point of the default transport (tests and benchmarks use fixture workers). */
  workerFile?: string;
  /** Seconds running jobs may take to finish after an interrupt. @default {@link GRACE_SECONDS} */
  graceSeconds?: number;
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
      outcomes.push({ trialId: trial.id, rung, loss: orientedLoss(value ?? null, goal), ...(stopped ? { stopped: true } : {}) });
    });
  }
  return outcomes;
}

/** The k fold data sets, each named by its content hash. */
function foldDatasets(data: PreparedData): SharedDataset[] {
  return (data.folds ?? []).map((fold) => {
    const part: PreparedData = { recipe: fold.recipe, train: fold.train, validation: fold.validation, test: { rows: 0, x: new Float32Array(0), y: new Float32Array(0) } };
    if (fold.classWeights) part.classWeights = fold.classWeights;
    if (fold.costMatrix) part.costMatrix = fold.costMatrix;
    return toSharedDataset(part, datasetId(part));
  });
}

function defaultTransport(options: ExecuteOptions): (context: TransportContext) => TrialTransport {
  return ({ workers }) =>
    new ThreadTransport({
      threads: workers,
      ...(options.faults ? { faults: options.faults } : {}),
      ...(options.workerFile ? { workerFile: options.workerFile } : {}),
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

/**
 * Drive a study until its sampler is done or the signal aborts. Trials already in the store (a
 * resumed study) are replayed into a fresh sampler first; jobs that were running when the study
 * stopped run again, from their checkpoint when it stands where they started, else from epoch 0
 * (training is deterministic, so the result is the same).
 */
async function drive(store: StudyStore, data: PreparedData, options: ExecuteOptions, resumeNotes: readonly string[]): Promise<StudyOutcome> {
  const doc = store.doc;
  const { definition, goal } = doc;
  const resumed = doc.trials.length > 0;
  const workers = options.workers ?? definition.workers ?? availableParallelism();
  const emit = options.onEvent ?? (() => undefined);
  const sampler = createSampler(definition);
  const planned = plannedBudget(definition);
  const history = new Map(doc.trials.map((t) => [t.id, t.configuration]));
  const queue = replay(sampler, recordedOutcomes(doc.trials, goal), history).pending;
  const lifecycle = new TrialLifecycle(doc, sampler, planned);
  const keeper = new CheckpointKeeper(options.checkpoints ?? new FolderCheckpointStore(store.dir));
  const persistence = new BatchedPersistence<{ record: TrialRecord; job: Job }>(
    store,
    keeper,
    sampler,
    (items, ranking) => {
      const progress = lifecycle.progress();
      for (const { record, job } of items) {
        emit({ type: 'trial-finished', trial: record, job, best: ranking[0]?.trial, finishedTrials: progress.endedTrials, progress });
      }
    },
    [...(await keeper.list()), ...doc.trials.map((t) => t.id)],
  );
  const dataset = toSharedDataset(data, datasetId(data));
  const notes = new Set<string>();
  /** Say something once per `key` (the message itself unless given). */
  const note = (message: string, key = message): void => {
    if (notes.has(key)) return;
    notes.add(key);
    emit({ type: 'note', message });
  };
  let busySeconds = 0;
  const started = Date.now();
  let stopping = options.signal?.aborted === true;
  // Ends running jobs once the grace time after an interrupt has passed; they stay `running` and are redone on resume.
  const cutOff = new AbortController();
  setMaxListeners(Infinity, cutOff.signal); // one listener per running job, and a queue may run hundreds
  let graceTimer: NodeJS.Timeout | undefined;
  const onAbort = (): void => {
    stopping = true;
    emit({ type: 'stopping', reason: 'interrupted' });
    graceTimer = setTimeout(() => cutOff.abort(), (options.graceSeconds ?? GRACE_SECONDS) * 1000);
    graceTimer.unref();
  };
  options.signal?.addEventListener('abort', onAbort, { once: true });

  doc.state = 'running';
  await store.save();
  emit({ type: 'study-started', name: doc.name, dir: store.dir, workers, plannedTrials: planned.trials, plannedEpochs: planned.epochs, resumed, progress: lifecycle.progress() });
  for (const message of [...store.notes, ...resumeNotes]) note(message);

  const inner = (options.transport ?? defaultTransport(options))({ workers });
  // k-fold: every job runs once per fold on the inner transport; the run loop sees one job and the fold mean.
  const transport = data.folds ? new FoldsTransport(inner, foldDatasets(data)) : inner;
  const running = new Map<number, Promise<void>>();

  /** Start a job: continue from the trial's checkpoint where the job asks for one and it stands there, else from epoch 0. */
  const startJob = async (proposed: Job): Promise<void> => {
    let job = proposed;
    const checkpoint = job.fromEpoch > 0 ? await keeper.at(job.trialId, job.fromEpoch) : undefined;
    if (job.fromEpoch > 0 && !checkpoint) {
      note(
        `trial ${job.trialId} has no checkpoint at epoch ${job.fromEpoch}; trials whose checkpoint is missing are trained again from epoch 0 (training is deterministic, so the results are the same)`,
        'missing checkpoint',
      );
      job = { ...job, fromEpoch: 0 };
    }
    const record = lifecycle.started(job, checkpoint !== undefined);
    emit({ type: 'job-started', job, fromCheckpoint: checkpoint !== undefined });
    // One controller per job: ended by the interrupt's cut-off or by the trial's time limit.
    const abort = new AbortController();
    const onCutOff = (): void => abort.abort();
    cutOff.signal.addEventListener('abort', onCutOff, { once: true });
    let timedOut = false;
    const timer = definition.trialTimeoutSeconds
      ? setTimeout(() => {
          timedOut = true;
          abort.abort();
        }, definition.trialTimeoutSeconds * 1000)
      : undefined;
    const trainJob = {
      trialId: job.trialId,
      seed: record.seed,
      configuration: job.configuration,
      datasetId: dataset.id,
      fromEpoch: job.fromEpoch,
      toEpoch: job.toEpoch,
      ...(hasSchedule(job.configuration) ? { maxEpochs: definition.budget.maxEpochs } : {}),
      ...(definition.earlyStopping ? { earlyStopping: { rule: definition.earlyStopping, goal: doc.goal } } : {}),
      ...(checkpoint ? { checkpoint } : {}),
    };
    const done = transport
      .run(trainJob, (report) => emit({ type: 'epoch', report }), abort.signal)
      .then(
        (result) => {
          busySeconds += result.workerSeconds;
          if (result.checkpoint) {
            keeper.put(job.trialId, result.checkpoint);
            persistence.checkpointed(job.trialId);
          }
          // A copy: by the time the save lands and the outcome is announced, the trial may be running again.
          persistence.queue({ record: { ...lifecycle.succeeded(job, result) }, job });
        },
        (error: unknown) => {
          const failure: JobFailure = cutOff.signal.aborted
            ? { kind: 'cut-off' }
            : timedOut
              ? { kind: 'timed-out' }
              : { kind: 'error', message: error instanceof Error ? error.message : String(error) };
          const next = lifecycle.failed(job, failure);
          if (next === 'retry') return startJob(job); // the same job again, from the same checkpoint
          if (next === 'ended') persistence.queue({ record: { ...lifecycle.record(job.trialId) }, job });
          return undefined;
        },
      )
      .finally(() => {
        clearTimeout(timer);
        cutOff.signal.removeEventListener('abort', onCutOff);
        if (running.get(job.trialId) === done) running.delete(job.trialId);
      });
    running.set(job.trialId, done);
  };

  try {
    await transport.addDataset(dataset);
    for (;;) {
      let state: 'wait' | 'done' | undefined;
      while (!stopping && running.size < transport.capacity) {
        const next = queue.shift() ?? sampler.next();
        if (typeof next === 'string') {
          state = next;
          break;
        }
        await startJob(next);
      }
      if (running.size === 0) {
        if (stopping || state === 'done') break;
        throw new Error('the sampler is waiting but no job is running');
      }
      await Promise.race(running.values());
      if (persistence.error) throw persistence.error;
    }
    await persistence.flush();
  } finally {
    clearTimeout(graceTimer);
    options.signal?.removeEventListener('abort', onAbort);
    await transport.close();
  }

  const wallSeconds = (Date.now() - started) / 1000;
  if (!stopping) lifecycle.endAll();
  doc.state = stopping ? 'interrupted' : 'finished';
  doc.totals = {
    epochsTrained: doc.trials.reduce((sum, t) => sum + t.epochsTrained, 0),
    workerUtilisation: wallSeconds > 0 ? Math.min(1, busySeconds / (workers * wallSeconds)) : 0,
    wallSeconds,
    workers,
  };
  await persistence.saveNow();
  const ranking = rankTrials(doc.trials, goal);
  emit({ type: 'study-finished', doc, ranking });
  return { dir: store.dir, file: store.file, doc, ranking };
}
