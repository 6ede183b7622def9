import { randomUUID } from 'node:crypto';
import { availableParallelism } from 'node:os';
import { toSharedDataset } from '../data/index.js';
import type { PreparedData } from '../data/types.js';
import { TrialPool } from '../pool/trial-pool.js';
import type { TrainRequest, TrainResult } from '../pool/messages.js';
import { trialSeed } from '../random/streams.js';
import { createSampler, plannedTrialCount, replay } from '../samplers/index.js';
import type { Job, JobOutcome, Sampler } from '../samplers/sampler.js';
import type { Objective } from '../study/definition.js';
import { rankTrials, type RankedTrial } from '../store/ranking.js';
import type { StudyStore } from '../store/study-store.js';
import type { StudyDocument, TrialRecord } from '../store/types.js';
import { KEPT_CHECKPOINTS, checkpointDir, checkpointEpoch, deleteCheckpoint } from './checkpoints.js';
import type { StudyObserver } from './events.js';
import { faultPlan } from './faults.js';
import { applyResult, newTrialRecord, orientedLoss } from './trial-records.js';

/** After an interrupt, running jobs get this long to finish before their threads are ended. */
export const GRACE_SECONDS = 10;

export interface ExecuteOptions {
  /** Worker threads. @default the study's `workers`, else available cores */
  workers?: number;
  onEvent?: StudyObserver;
  /** Aborting stops handing out jobs; running jobs finish, then the study is saved as interrupted. */
  signal?: AbortSignal;
  /** Worker entry point (tests and benchmarks use fixture workers). */
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

const ENDED = new Set(['completed', 'stopped', 'diverged', 'failed', 'timed-out']);

/** The outcomes a study file records, one per (trial, rung) finished, for rebuilding a sampler. */
export function recordedOutcomes(trials: readonly TrialRecord[], objective: Objective): JobOutcome[] {
  const outcomes: JobOutcome[] = [];
  for (const trial of trials) {
    trial.rungObjectives.forEach((value, rung) => {
      outcomes.push({ trialId: trial.id, rung, loss: orientedLoss(value ?? null, objective) });
    });
  }
  return outcomes;
}

/**
 * Drive a study until its sampler is done or the signal aborts. Trials already in the store (a
 * resumed study) are replayed into a fresh sampler first; jobs that were running when the study
 * stopped run again, from their checkpoint when it stands where they started.
 */
export async function executeStudy(store: StudyStore, data: PreparedData, options: ExecuteOptions = {}): Promise<StudyOutcome> {
  const doc = store.doc;
  const { definition, objective } = doc;
  const resumed = doc.trials.length > 0;
  const workers = options.workers ?? definition.workers ?? availableParallelism();
  const emit = options.onEvent ?? (() => undefined);
  const faults = faultPlan();
  const sampler = createSampler(definition);
  const records = new Map<number, TrialRecord>(doc.trials.map((t) => [t.id, t]));
  const queue = await jobsToRedo(replay(sampler, recordedOutcomes(doc.trials, objective)).pending, store.dir);
  const paused = new Set(doc.trials.filter((t) => t.status === 'paused').map((t) => t.id));
  const failures = new Map<number, number>();
  /** Trials whose checkpoint may still be on disk (every trial of a resumed study, to be safe). */
  const withCheckpoint = new Set(records.keys());
  const dataset = toSharedDataset(data, randomUUID());
  let finishedTrials = doc.trials.filter((t) => ENDED.has(t.status)).length;
  let busySeconds = 0;
  const started = Date.now();
  const stoppingReason = (): string | undefined => (options.signal?.aborted ? 'interrupted' : undefined);
  let stopping = stoppingReason() !== undefined;
  // Ends running jobs once the grace time after an interrupt has passed; they stay `running` and are redone on resume.
  const cutOff = new AbortController();
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
  emit({ type: 'study-started', name: doc.name, dir: store.dir, workers, plannedTrials: plannedTrialCount(definition), resumed });

  const pool = new TrialPool({ workers, ...(options.workerFile ? { workerFile: options.workerFile } : {}) });
  const running = new Map<number, Promise<void>>();

  const startJob = (job: Job): void => {
    let record = records.get(job.trialId);
    if (!record) {
      record = newTrialRecord(job, trialSeed(definition.sampler.seed, job.trialId));
      records.set(job.trialId, record);
      doc.trials.push(record);
    }
    record.status = 'running';
    record.attempts += 1;
    record.startedAt ??= new Date().toISOString();
    if (job.reason) (record.promotions ??= []).push({ fromRung: job.rung - 1, reason: job.reason });
    paused.delete(job.trialId);
    withCheckpoint.add(job.trialId);
    emit({ type: 'job-started', job });
    const fault = faults.faultFor(job.trialId, (failures.get(job.trialId) ?? 0) + 1);
    const request: Omit<TrainRequest, 'progressPort'> = {
      trialId: job.trialId,
      seed: record.seed,
      params: job.params,
      dataset,
      fromEpoch: job.fromEpoch,
      toEpoch: job.toEpoch,
      checkpointOut: checkpointDir(store.dir, job.trialId),
      ...(job.fromEpoch > 0 ? { checkpointIn: checkpointDir(store.dir, job.trialId) } : {}),
      ...(fault ? { fault } : {}),
    };
    // One controller per job, held here: ended by the interrupt's cut-off or by the trial's time limit.
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
    const done = pool
      .run(request, (report) => emit({ type: 'epoch', report }), abort.signal)
      .then(
        (result) => settle(job, result, false),
        (error: unknown) => settle(job, error instanceof Error ? error : new Error(String(error)), timedOut),
      )
      .finally(() => {
        clearTimeout(timer);
        cutOff.signal.removeEventListener('abort', onCutOff);
        if (running.get(job.trialId) === done) running.delete(job.trialId);
      });
    running.set(job.trialId, done);
  };

  /** Record a job's outcome and tell the sampler, synchronously, so the next job can start at once. */
  const settle = (job: Job, outcome: TrainResult | Error, timedOut: boolean): void => {
    const record = records.get(job.trialId)!;
    if (outcome instanceof Error && cutOff.signal.aborted) return; // cut off by an interrupt: redone on resume
    if (outcome instanceof Error) {
      const failed = (failures.get(job.trialId) ?? 0) + 1;
      failures.set(job.trialId, failed);
      if (!timedOut && failed <= definition.retries) {
        startJob(job); // the same job again, from the same checkpoint
        return;
      }
      record.status = timedOut ? 'timed-out' : 'failed';
      record.error = timedOut ? `ran longer than trialTimeoutSeconds (${definition.trialTimeoutSeconds} s)` : outcome.message;
      record.endedAt = new Date().toISOString();
      record.objective = null;
      record.rung = job.rung;
      record.rungObjectives[job.rung] = null;
      sampler.report({ trialId: job.trialId, rung: job.rung, loss: null });
    } else {
      failures.delete(job.trialId);
      busySeconds += outcome.workerSeconds;
      applyResult(record, job, outcome, objective);
      sampler.report({ trialId: job.trialId, rung: job.rung, loss: orientedLoss(record.objective, objective) });
      if (record.status !== 'diverged') {
        record.status = 'paused';
        paused.add(record.id);
      }
    }
    // Every paused trial the sampler has now given up on is final.
    for (const id of [...paused]) if (!sampler.mayContinue(id)) finalise(records.get(id)!);
    if (ENDED.has(record.status)) finishedTrials += 1;
    persistInBackground(record, job, finishedTrials);
  };

  /**
   * Saving, pruning and announcing run after the next job has been dispatched, in batches: every
   * outcome settled while a save is under way is ranked, pruned and saved once more together.
   */
  const unsaved: { record: TrialRecord; job: Job; finished: number }[] = [];
  let persisting: Promise<void> | undefined;
  let persistError: unknown;
  const persistInBackground = (record: TrialRecord, job: Job, finished: number): void => {
    unsaved.push({ record, job, finished });
    if (!persisting) drainUnsaved();
  };
  const drainUnsaved = (): void => {
    persisting = (async () => {
      await new Promise<void>((resolve) => setImmediate(resolve)); // let the loop start the next job first
      while (unsaved.length > 0) {
        const batch = unsaved.splice(0);
        const ranking = rankTrials(doc.trials, objective);
        await pruneCheckpoints(store.dir, ranking, records, withCheckpoint, sampler);
        // Saved before it is announced: a trial shown as finished is on disk.
        await store.save();
        for (const item of batch) emit({ type: 'trial-finished', trial: item.record, job: item.job, best: ranking[0]?.trial, finishedTrials: item.finished });
      }
    })()
      .catch((error: unknown) => {
        persistError ??= error;
      })
      .finally(() => {
        persisting = undefined;
        if (unsaved.length > 0 && !persistError) drainUnsaved(); // settled after the last check
      });
  };

  const finalise = (record: TrialRecord): void => {
    paused.delete(record.id);
    record.status = record.epochsTrained >= definition.budget.maxEpochs ? 'completed' : 'stopped';
  };

  try {
    for (;;) {
      let state: 'wait' | 'done' | undefined;
      while (!stopping && running.size < workers) {
        const next = queue.shift() ?? sampler.next();
        if (typeof next === 'string') {
          state = next;
          break;
        }
        startJob(next);
      }
      if (running.size === 0) {
        if (stopping || state === 'done') break;
        throw new Error('the sampler is waiting but no job is running');
      }
      await Promise.race(running.values());
      if (persistError) throw persistError;
    }
    while (persisting) await persisting;
    if (persistError) throw persistError;
  } finally {
    clearTimeout(graceTimer);
    options.signal?.removeEventListener('abort', onAbort);
    await pool.close();
  }

  const wallSeconds = (Date.now() - started) / 1000;
  if (!stopping) for (const id of [...paused]) finalise(records.get(id)!);
  doc.state = stopping ? 'interrupted' : 'finished';
  doc.totals = {
    epochsTrained: doc.trials.reduce((sum, t) => sum + t.epochsTrained, 0),
    workerUtilisation: wallSeconds > 0 ? Math.min(1, busySeconds / (workers * wallSeconds)) : 0,
    wallSeconds,
    workers,
  };
  await store.save();
  const ranking = rankTrials(doc.trials, objective);
  emit({ type: 'study-finished', doc, ranking });
  return { dir: store.dir, file: store.file, doc, ranking };
}

/**
 * Jobs handed out again after a replay. A continuation whose checkpoint does not stand at the job's
 * first epoch (lost, or already past it when the study stopped) trains from scratch instead:
 * continuation is exact, so the result is the same.
 */
async function jobsToRedo(pending: readonly Job[], runDir: string): Promise<Job[]> {
  const jobs: Job[] = [];
  for (const job of pending) {
    if (job.fromEpoch > 0 && (await checkpointEpoch(runDir, job.trialId)) !== job.fromEpoch) jobs.push({ ...job, fromEpoch: 0 });
    else jobs.push(job);
  }
  return jobs;
}

/**
 * Keep the checkpoints of trials the sampler may still continue and of the best few ranked ones;
 * delete the rest (diverged, failed and out-ranked trials), so the run directory stays small.
 */
async function pruneCheckpoints(
  runDir: string,
  ranking: readonly RankedTrial[],
  records: ReadonlyMap<number, TrialRecord>,
  withCheckpoint: Set<number>,
  sampler: Sampler,
): Promise<void> {
  const kept = new Set(ranking.slice(0, KEPT_CHECKPOINTS).map((r) => r.trial.id));
  for (const id of [...withCheckpoint]) {
    const status = records.get(id)?.status;
    if (status === 'running' || status === 'paused' || kept.has(id) || sampler.mayContinue(id)) continue;
    await deleteCheckpoint(runDir, id);
    withCheckpoint.delete(id);
  }
}
