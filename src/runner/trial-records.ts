import type { TrainResult } from '../pool/messages.js';
import type { Job } from '../samplers/sampler.js';
import type { Objective } from '../study/definition.js';
import type { TrialRecord } from '../store/types.js';

/** A fresh record for a trial's first job. */
export function newTrialRecord(job: Job, seed: number): TrialRecord {
  return {
    id: job.trialId,
    params: job.params,
    seed,
    status: 'running',
    rung: job.rung,
    bracket: job.bracket,
    epochsTrained: 0,
    curve: [],
    objective: null,
    rungObjectives: [],
    workerSeconds: 0,
    attempts: 0,
  };
}

/** The objective metric of the last epoch of a result, or null when it has none. */
export function objectiveOf(result: TrainResult, objective: Objective): number | null {
  const last = result.epochs.at(-1);
  if (!last) return null;
  const value = objective.metric === 'validationLoss' ? last.validationLoss : last.metrics[objective.metric];
  return value !== undefined && Number.isFinite(value) ? value : null;
}

/** Objective turned into a loss for samplers: smaller is better; null stays null. */
export function orientedLoss(value: number | null, objective: Objective): number | null {
  if (value === null) return null;
  return objective.direction === 'maximize' ? -value : value;
}

/** Fold a worker's result for `job` into the trial's record (curve, epochs, objective, times). */
export function applyResult(record: TrialRecord, job: Job, result: TrainResult, objective: Objective): void {
  // A re-run of a job (after a failure or an interruption) replaces the epochs it covers.
  record.curve = record.curve.filter((point) => point.epoch <= job.fromEpoch);
  for (const { trialId: _trialId, ...point } of result.epochs) record.curve.push(point);
  record.workerSeconds += result.workerSeconds;
  record.rung = job.rung;
  record.bracket = job.bracket;
  record.endedAt = new Date().toISOString();
  if (result.status === 'diverged') {
    record.status = 'diverged';
    record.objective = null;
    record.epochsTrained = result.epochs.length > 0 ? result.epochs.at(-1)!.epoch : job.fromEpoch;
    if (result.divergence) record.divergence = result.divergence;
    record.rungObjectives[job.rung] = null;
    return;
  }
  record.epochsTrained = job.toEpoch;
  record.objective = objectiveOf(result, objective);
  record.rungObjectives[job.rung] = record.objective;
}
