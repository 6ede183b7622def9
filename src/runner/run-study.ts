import { randomUUID } from 'node:crypto';
import { existsSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import path from 'node:path';
import { prepareData, toSharedDataset } from '../data/index.js';
import type { PreparedData } from '../data/types.js';
import { UserError } from '../errors.js';
import { TrialPool } from '../pool/trial-pool.js';
import type { SharedDataset, TrainResult } from '../pool/messages.js';
import { trialSeed } from '../random/streams.js';
import { createSampler, plannedTrialCount } from '../samplers/index.js';
import type { Job, Sampler } from '../samplers/sampler.js';
import { resolveObjective, type Objective, type StudyDefinition } from '../study/definition.js';
import { loadStudy } from '../study/load.js';
import { rankTrials, type RankedTrial } from '../store/ranking.js';
import { StudyStore, studyFilePath } from '../store/study-store.js';
import type { StudyDocument, TrialRecord } from '../store/types.js';
import { KEPT_CHECKPOINTS, checkpointDir, deleteCheckpoint } from './checkpoints.js';
import type { StudyObserver } from './events.js';
import { applyResult, newTrialRecord, orientedLoss } from './trial-records.js';

export interface RunOptions {
  /** Run directory. @default `runs/<study name>` beside the current directory */
  out?: string;
  /** Worker threads; overrides the study's `workers`. @default the study's, else available cores */
  workers?: number;
  /** Replace a run directory that already holds a study. @default false */
  force?: boolean;
  /** Told of every step; the CLI draws progress from it. */
  onEvent?: StudyObserver;
  /** Aborting stops handing out jobs; running jobs finish, then the study is saved as interrupted. */
  signal?: AbortSignal;
  /** Worker entry point (tests use fixture workers). */
  workerFile?: string;
}

export interface StudyOutcome {
  dir: string;
  file: string;
  doc: StudyDocument;
  ranking: RankedTrial[];
}

/** Launch a study from its definition file: validate, prepare the data, search, record and rank. */
export async function runStudy(definitionFile: string, options: RunOptions = {}): Promise<StudyOutcome> {
  const { definition, file } = await loadStudy(definitionFile);
  const { data, summary } = await prepareData(definition.data, file);
  const dir = path.resolve(options.out ?? path.join('runs', definition.name));
  if (existsSync(studyFilePath(dir)) && !options.force) {
    throw new UserError(
      'E_RUN_DIR_TAKEN',
      `${dir}: already holds a study; use \`rungwise resume ${dir}\` to continue it, or pass --force to replace it`,
    );
  }
  if (options.force) await import('node:fs/promises').then((fs) => fs.rm(dir, { recursive: true, force: true }));
  const now = new Date().toISOString();
  const store = await StudyStore.create(dir, {
    format: 'rungwise-study',
    version: 1,
    name: definition.name,
    definition,
    definitionFile: file,
    objective: resolveObjective(definition),
    data: summary,
    recipe: data.recipe,
    state: 'running',
    createdAt: now,
    updatedAt: now,
    trials: [],
  });
  return executeStudy(store, data, options, false);
}

interface RunningJob {
  job: Job;
  done: Promise<void>;
}

/**
 * Drive a study until its sampler is done or the signal aborts. The store's trials may already hold
 * results (a resumed study); the sampler is rebuilt by replaying them.
 */
export async function executeStudy(store: StudyStore, data: PreparedData, options: RunOptions, resumed: boolean): Promise<StudyOutcome> {
  const doc = store.doc;
  const definition = doc.definition;
  const objective = doc.objective;
  const workers = options.workers ?? definition.workers ?? availableParallelism();
  const sampler = createSampler(definition);
  const dataset = toSharedDataset(data, randomUUID());
  const records = new Map<number, TrialRecord>(doc.trials.map((t) => [t.id, t]));
  const emit = options.onEvent ?? (() => undefined);
  const pool = new TrialPool({ workers, ...(options.workerFile ? { workerFile: options.workerFile } : {}) });
  const started = Date.now();
  let busySeconds = 0;
  let finishedTrials = doc.trials.filter((t) => t.status !== 'running').length;
  const paused = new Set<number>();
  /** Failed attempts of each trial's current job, for `retries`. */
  const failures = new Map<number, number>();

  doc.state = 'running';
  emit({ type: 'study-started', name: doc.name, dir: store.dir, workers, plannedTrials: plannedTrialCount(definition), resumed });

  const running = new Map<number, RunningJob>();
  let stopping = options.signal?.aborted ?? false;
  const onAbort = (): void => {
    stopping = true;
    emit({ type: 'stopping', reason: 'interrupted' });
  };
  options.signal?.addEventListener('abort', onAbort, { once: true });

  const finalise = async (record: TrialRecord): Promise<void> => {
    paused.delete(record.id);
    if (record.status === 'paused') record.status = record.epochsTrained >= definition.budget.maxEpochs ? 'completed' : 'stopped';
    await pruneCheckpoints(store.dir, doc.trials, objective, sampler);
  };

  const settle = async (job: Job, outcome: TrainResult | Error): Promise<void> => {
    const record = records.get(job.trialId)!;
    if (outcome instanceof Error) {
      const timedOut = outcome.name === 'AbortError' || /aborted/i.test(outcome.message);
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
      sampler.report({ trialId: job.trialId, rung: job.rung, loss: null });
    } else {
      failures.delete(job.trialId);
      busySeconds += outcome.workerSeconds;
      applyResult(record, job, outcome, objective);
      sampler.report({ trialId: job.trialId, rung: job.rung, loss: orientedLoss(record.objective, objective) });
      if (record.status !== 'diverged') record.status = 'paused';
    }
    // Any paused trial the sampler has now given up on is final.
    if (record.status === 'paused') paused.add(record.id);
    for (const id of [...paused]) {
      if (!sampler.mayContinue(id)) await finalise(records.get(id)!);
    }
    if (record.status !== 'paused') {
      finishedTrials += 1;
      await deleteIfUnranked(store.dir, record);
    }
    const best = rankTrials(doc.trials, objective)[0]?.trial;
    emit({ type: 'trial-finished', trial: record, job, best, finishedTrials });
    await store.save();
  };

  const startJob = (job: Job): void => {
    let record = records.get(job.trialId);
    if (!record) {
      record = newTrialRecord(job, trialSeed(samplerSeed(definition), job.trialId));
      records.set(job.trialId, record);
      doc.trials.push(record);
    }
    record.status = 'running';
    record.attempts += 1;
    record.startedAt ??= new Date().toISOString();
    if ('reason' in job && typeof job.reason === 'string') {
      (record.promotions ??= []).push({ fromRung: job.rung - 1, reason: job.reason });
    }
    paused.delete(job.trialId);
    emit({ type: 'job-started', job });
    const signal = definition.trialTimeoutSeconds ? AbortSignal.timeout(definition.trialTimeoutSeconds * 1000) : undefined;
    const request = {
      trialId: job.trialId,
      seed: record.seed,
      params: job.params,
      dataset: dataset as SharedDataset,
      fromEpoch: job.fromEpoch,
      toEpoch: job.toEpoch,
      checkpointOut: checkpointDir(store.dir, job.trialId),
      ...(job.fromEpoch > 0 ? { checkpointIn: checkpointDir(store.dir, job.trialId) } : {}),
    };
    const done = pool
      .run(request, (report) => emit({ type: 'epoch', report }), signal)
      .then(
        (result) => settle(job, result),
        (error: unknown) => settle(job, error instanceof Error ? error : new Error(String(error))),
      )
      .finally(() => {
        if (running.get(job.trialId)?.done === done) running.delete(job.trialId);
      });
    running.set(job.trialId, { job, done });
  };

  try {
    for (;;) {
      let state: 'wait' | 'done' | undefined;
      while (!stopping && running.size < workers) {
        const next = sampler.next();
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
      await Promise.race([...running.values()].map((r) => r.done));
    }
  } finally {
    options.signal?.removeEventListener('abort', onAbort);
    await pool.close();
  }

  const wallSeconds = (Date.now() - started) / 1000;
  for (const id of [...paused]) await finalise(records.get(id)!);
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

  /** A trial that ended without a ranked result keeps no checkpoint. */
  async function deleteIfUnranked(runDir: string, record: TrialRecord): Promise<void> {
    if (record.status === 'diverged' || record.status === 'failed' || record.status === 'timed-out') {
      await deleteCheckpoint(runDir, record.id);
    }
  }
}

/** The seed that keys every trial's stream. */
function samplerSeed(definition: StudyDefinition): number {
  return definition.sampler.seed;
}

/** Keep checkpoints of trials the sampler may still continue and of the best few finished ones; delete the rest. */
async function pruneCheckpoints(runDir: string, trials: readonly TrialRecord[], objective: Objective, sampler: Sampler): Promise<void> {
  const kept = new Set(rankTrials(trials, objective).slice(0, KEPT_CHECKPOINTS).map((r) => r.trial.id));
  for (const trial of trials) {
    if (trial.status === 'stopped' || trial.status === 'completed') {
      if (!kept.has(trial.id) && !sampler.mayContinue(trial.id)) await deleteCheckpoint(runDir, trial.id);
    }
  }
}
