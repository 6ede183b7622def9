import type { Job } from '../samplers/sampler.js';
import type { Goal } from '../core/configuration.js';
import { scoreAt, standardErrorAt } from '../core/ranking.js';
import type { CurvePoint, TrialRecord } from '../core/trial.js';
import type { TrainResult } from '../core/job.js';

/** A fresh record for a trial's first job. */
export function newTrialRecord(job: Job, seed: number): TrialRecord {
  const record: TrialRecord = {
    id: job.trialId,
    configuration: job.configuration,
    seed,
    status: 'training',
    rung: job.rung,
    bracket: job.bracket,
    epochsTrained: 0,
    curve: [],
    score: null,
    rungScores: [],
    workerSeconds: 0,
    retries: 0,
    jobs: [],
  };
  if (job.origin) record.origin = job.origin;
  return record;
}

/** The goal metric at the last epoch of a result, or null when it has none. */
export function scoreOf(result: TrainResult, goal: Goal): number | null {
  const last = result.epochs.at(-1);
  return last ? scoreAt(last, goal) : null;
}

/** Fold a transport's result for `job` into the trial's record (curve, epochs, score, times). */
export function applyResult(record: TrialRecord, job: Job, result: TrainResult, goal: Goal): void {
  // A re-run of a job (after a failure, an interruption or a lost checkpoint) replaces the epochs it covers.
  record.curve = record.curve.filter((point) => point.epoch <= job.fromEpoch);
  for (const { trialId: _trialId, ...point } of result.epochs) record.curve.push(point);
  record.workerSeconds += result.workerSeconds;
  record.rung = job.rung;
  record.bracket = job.bracket;
  record.endedAt = new Date().toISOString();
  if (result.classFigures) record.classFigures = result.classFigures;
  else delete record.classFigures;
  if (result.status === 'diverged') {
    record.status = 'diverged';
    record.score = null;
    delete record.scoreStandardError;
    record.epochsTrained = result.epochs.length > 0 ? result.epochs.at(-1)!.epoch : job.fromEpoch;
    if (result.divergence) record.divergence = result.divergence;
    record.rungScores[job.rung] = null;
    return;
  }
  record.epochsTrained = result.stoppedAtEpoch ?? job.toEpoch;
  if (result.stoppedAtEpoch !== undefined) {
    record.stoppedEarly = true;
    record.stoppedAtEpoch = result.stoppedAtEpoch;
  } else {
    delete record.stoppedEarly;
    delete record.stoppedAtEpoch;
  }
  if (result.divergedAfterBest) record.divergedAfterBest = result.divergedAfterBest;
  else delete record.divergedAfterBest;
  // The scored point: the last epoch, or with early stopping the best epoch (which may be an earlier job's).
  let scored: CurvePoint | undefined;
  if (result.bestEpoch !== undefined) {
    record.bestEpoch = result.bestEpoch;
    scored = record.curve.find((point) => point.epoch === result.bestEpoch);
    record.score = scored ? scoreAt(scored, goal) : null;
  } else {
    delete record.bestEpoch;
    record.score = scoreOf(result, goal);
    scored = result.epochs.at(-1);
  }
  const standardError = scored && record.score !== null ? standardErrorAt(scored, goal) : undefined;
  if (standardError !== undefined) record.scoreStandardError = standardError;
  else delete record.scoreStandardError;
  record.rungScores[job.rung] = record.score;
}

/**
 * A trial whose curve stops before the end of its last job (the curve log's last line was cut after
 * the study file recorded the job) is put back as it was while that job ran, so the job runs again on
 * resume, from its checkpoint or from epoch 0, with the same result. Returns the job's epochs, or
 * undefined when the curve covers the trial, or when more than its last job was lost (its recorded
 * score then stands).
 */
export function rewindUnrecordedJob(record: TrialRecord): { fromEpoch: number; toEpoch: number } | undefined {
  const last = record.jobs.at(-1);
  if (!last || (last.status !== 'done' && last.status !== 'diverged')) return undefined;
  const recorded = record.curve.at(-1)?.epoch ?? 0;
  const expected = record.status === 'diverged' ? record.epochsTrained : Math.max(record.epochsTrained, record.stoppedAtEpoch ?? 0);
  if (recorded >= expected || recorded < last.fromEpoch) return undefined;
  last.status = 'cut-off';
  record.status = 'training';
  record.epochsTrained = last.fromEpoch;
  record.curve = record.curve.filter((point) => point.epoch <= last.fromEpoch);
  record.rungScores = record.rungScores.slice(0, last.rung);
  record.score = record.rungScores.at(-1) ?? null;
  for (const key of ['stoppedEarly', 'stoppedAtEpoch', 'divergedAfterBest', 'divergence', 'scoreStandardError', 'endedAt'] as const) delete record[key];
  return { fromEpoch: last.fromEpoch, toEpoch: last.toEpoch };
}
