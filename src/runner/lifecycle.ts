/**
 * The life of every trial in a run: status changes, job records, retries and the sampler's view of
 * outcomes. Synchronous throughout, so an outcome is recorded and reported to the sampler before the
 * run loop asks it for the next job.
 */
import { trialSeed } from '../random/streams.js';
import type { Job, Sampler } from '../samplers/sampler.js';
import type { Goal, TrialConfiguration } from '../core/configuration.js';
import type { StudyDefinition } from '../study/definition.js';
import { orientedLoss, scoredEpochs } from '../core/ranking.js';
import { isEnded } from '../core/trial-status.js';
import { baselineScore } from '../core/baselines.js';
import { healthFlags } from '../core/health.js';
import type { JobRecord, TrialFlag, TrialRecord } from '../core/trial.js';
import type { StudyDocument } from '../store/types.js';
import type { TrainResult } from '../core/job.js';
import type { StudyProgress } from './events.js';
import { applyResult, newTrialRecord } from './trial-records.js';
import { weightCount, type NetworkShape } from '../core/size.js';

/** What the lifecycle needs to record a trial's size and speed: each configuration's data shape, and whether jobs ask for the time per row. */
export interface SizeAndSpeed {
  /** The shape of the data a configuration trains on (its preprocessing choice's inputs). */
  shapeOf: (configuration: TrialConfiguration) => NetworkShape;
  /** True: a trial's jobs ask the thread that trains them to time its network (`TrainJob.timeRows`) until a time is recorded. */
  timeRows: boolean;
}

/** Why a job did not bring a result. */
export type JobFailure = { kind: 'error'; message: string } | { kind: 'timed-out' } | { kind: 'cut-off' };

export class TrialLifecycle {
  private readonly records: Map<number, TrialRecord>;
  /** Failed runs of each job in this session, keyed by trial and end epoch. */
  private readonly failures = new Map<string, number>();
  private jobsDone: number;
  /** Ids of waiting trials (a subset of the records, kept to avoid scanning them all after each outcome). */
  private readonly waiting = new Set<number>();

  constructor(
    private readonly doc: StudyDocument,
    private readonly sampler: Sampler,
    private readonly planned: { trials: number; epochs: number },
    private readonly sizeAndSpeed?: SizeAndSpeed,
  ) {
    this.records = new Map(doc.trials.map((t) => [t.id, t]));
    // A study from before weight counts gets them on resume (they follow from configuration and data alone).
    if (sizeAndSpeed) for (const t of doc.trials) t.weightCount ??= this.weightsOf(t.configuration);
    for (const t of doc.trials) if (t.status === 'waiting') this.waiting.add(t.id);
    this.jobsDone = doc.trials.reduce((sum, t) => sum + t.jobs.filter((j) => j.status !== 'training' && j.status !== 'cut-off').length, 0);
  }

  /** The configuration's weight count for the data it trains on. */
  private weightsOf(configuration: TrialConfiguration): number {
    const { inputs, outputs } = this.sizeAndSpeed!.shapeOf(configuration);
    return weightCount(configuration, inputs, outputs);
  }

  private get definition(): StudyDefinition {
    return this.doc.definition;
  }

  private get goal(): Goal {
    return this.doc.goal;
  }

  record(trialId: number): TrialRecord {
    const record = this.records.get(trialId);
    if (!record) throw new Error(`no record of trial ${trialId}`);
    return record;
  }

  /** Trials waiting at the end of a rung or training now. */
  activeCount(): number {
    let n = 0;
    for (const record of this.records.values()) if (record.status === 'training' || record.status === 'waiting') n++;
    return n;
  }

  progress(): StudyProgress {
    let epochsDone = 0;
    let endedTrials = 0;
    for (const record of this.records.values()) {
      epochsDone += record.epochsTrained;
      if (isEnded(record.status)) endedTrials++;
    }
    return { jobsDone: this.jobsDone, epochsDone, endedTrials, plannedTrials: this.planned.trials, plannedEpochs: this.planned.epochs };
  }

  /** Mark the job started; `fromCheckpoint` says whether it continues from the trial's checkpoint. */
  started(job: Job, fromCheckpoint: boolean): TrialRecord {
    let record = this.records.get(job.trialId);
    if (!record) {
      record = newTrialRecord(job, trialSeed(this.definition.sampler.seed, job.trialId));
      if (this.sizeAndSpeed) record.weightCount = this.weightsOf(job.configuration);
      this.records.set(job.trialId, record);
      this.doc.trials.push(record);
    }
    record.status = 'training';
    this.waiting.delete(record.id);
    record.startedAt ??= new Date().toISOString();
    const last = record.jobs.at(-1);
    const again = last !== undefined && last.rung === job.rung && last.toEpoch === job.toEpoch && last.status !== 'done' && last.status !== 'diverged';
    if (again) {
      // The same job once more: after a failure it is a retry; after an interruption it is the same attempt.
      if (last.status === 'failed') {
        last.attempts += 1;
        record.retries += 1;
      }
      last.status = 'training';
      last.fromEpoch = job.fromEpoch;
      last.fromCheckpoint = fromCheckpoint;
    } else {
      const entry: JobRecord = { rung: job.rung, fromEpoch: job.fromEpoch, toEpoch: job.toEpoch, fromCheckpoint, attempts: 1, status: 'training' };
      record.jobs.push(entry);
      if (job.reason) (record.promotions ??= []).push({ fromRung: job.rung - 1, reason: job.reason });
    }
    return record;
  }

  /** Fold a result in and report it to the sampler. */
  succeeded(job: Job, result: TrainResult): TrialRecord {
    const record = this.record(job.trialId);
    this.failures.delete(jobKey(job));
    applyResult(record, job, result, this.goal);
    const entry = record.jobs.at(-1)!;
    entry.status = result.status === 'completed' ? 'done' : 'diverged';
    if (result.ranOn) entry.ranOn = result.ranOn;
    if (record.status !== 'diverged') {
      record.status = 'waiting';
      this.waiting.add(record.id);
    }
    this.jobsDone++;
    this.recordSpeed(record, result);
    const flagged = this.checkHealth(record, job.rung);
    const loss = flagged ? null : orientedLoss(record.score, this.goal);
    this.sampler.report({ trialId: job.trialId, rung: job.rung, loss, ...(result.stoppedAtEpoch !== undefined ? { stopped: true } : {}) });
    // A trial at the epoch limit has finished: no job can continue it, so it ends now, not when its sampler lets go.
    if (record.status === 'waiting' && scoredEpochs(record) >= this.definition.budget.maxEpochs) this.end(record);
    this.endAbandoned();
    return record;
  }

  /**
   * Record the trial's health flags at its scored point; true when a flag makes the rung's result a bad
   * one for the sampler (a diverged result is a null loss anyway).
   */
  private checkHealth(record: TrialRecord, rung: number): boolean {
    const flags = healthFlags(record, this.goal, baselineScore(this.doc.baselines?.constant, this.goal.metric));
    // Over the time limit is a flag for the ranking, never a bad result for the sampler: the time is measured, not deterministic.
    const all = [...flags, ...limitFlags(record, this.definition.footprint?.maxRowMicroseconds)];
    if (all.length > 0) record.flags = all;
    else delete record.flags;
    const flagged = flags.length > 0 && record.score !== null;
    const rungs = (record.flaggedRungs ?? []).filter((r) => r !== rung);
    if (flagged) rungs.push(rung);
    if (rungs.length > 0) record.flaggedRungs = rungs;
    else delete record.flaggedRungs;
    return flagged;
  }

  /** Whether the trial's next job is to time its network: timing is on and no time is recorded yet. */
  wantsRowTime(record: TrialRecord): boolean {
    return this.sizeAndSpeed?.timeRows === true && record.rowMicroseconds === undefined;
  }

  /** Record the time per row the trial's training thread measured, the first time one comes (the time depends on its shape alone). */
  private recordSpeed(record: TrialRecord, result: TrainResult): void {
    if (!this.wantsRowTime(record) || result.rowMicroseconds === undefined || record.status === 'diverged') return;
    record.rowMicroseconds = result.rowMicroseconds;
  }

  /**
   * A job ended without a result. `'retry'`: run the same job again (the study's `retries` allow it);
   * `'ended'`: the trial is given up and the sampler told; `'kept'`: cut off by an interrupt, redone on resume.
   */
  failed(job: Job, failure: JobFailure): 'retry' | 'ended' | 'kept' {
    const record = this.record(job.trialId);
    const entry = record.jobs.at(-1)!;
    if (failure.kind === 'cut-off') {
      entry.status = 'cut-off';
      return 'kept';
    }
    const failed = (this.failures.get(jobKey(job)) ?? 0) + 1;
    this.failures.set(jobKey(job), failed);
    entry.status = failure.kind === 'timed-out' ? 'timed-out' : 'failed';
    if (failure.kind === 'error' && failed <= this.definition.retries) return 'retry';
    record.status = failure.kind === 'timed-out' ? 'timed-out' : 'failed';
    record.error = failure.kind === 'timed-out' ? `ran longer than trialTimeoutSeconds (${this.definition.trialTimeoutSeconds} s)` : failure.message;
    record.endedAt = new Date().toISOString();
    record.score = null;
    record.rung = job.rung;
    record.rungScores[job.rung] = null;
    this.jobsDone++;
    this.sampler.report({ trialId: job.trialId, rung: job.rung, loss: null });
    this.endAbandoned();
    return 'ended';
  }

  /** At the end of a study that was not interrupted, every trial still waiting is final. */
  endAll(): void {
    for (const id of [...this.waiting]) this.end(this.record(id));
  }

  /** Every waiting trial the sampler has now given up on is final. */
  private endAbandoned(): void {
    for (const id of [...this.waiting]) if (!this.sampler.mayContinue(id)) this.end(this.record(id));
  }

  private end(record: TrialRecord): void {
    this.waiting.delete(record.id);
    record.status = scoredEpochs(record) >= this.definition.budget.maxEpochs ? 'trained' : 'dropped';
  }
}

function jobKey(job: Job): string {
  return `${job.trialId}/${job.toEpoch}`;
}

/** `too-slow` when the trial's measured time per row is over the study's limit. */
function limitFlags(record: TrialRecord, maxRowMicroseconds: number | undefined): TrialFlag[] {
  return maxRowMicroseconds !== undefined && record.rowMicroseconds !== undefined && record.rowMicroseconds > maxRowMicroseconds ? ['too-slow'] : [];
}
