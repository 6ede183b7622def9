/**
 * The one definition of a trial's status groups. A trial is `training` while a job trains it, `waiting`
 * at the end of a rung while the sampler may still continue it, and ends in one of the ended statuses.
 */
import { UserError } from './errors.js';
import type { TrialRecord, TrialStatus } from './trial.js';

/** Statuses from which no job will continue the trial. */
export const ENDED_STATUSES: readonly TrialStatus[] = ['trained', 'dropped', 'diverged', 'failed', 'timed-out'];
/**
 * Statuses of trials that are ranked, at the last point they were scored: those that trained to the
 * end of a rung, and those being continued past it (so a leader does not drop out of the ranking while
 * its next rung trains).
 */
export const RANKED_STATUSES: readonly TrialStatus[] = ['trained', 'dropped', 'waiting', 'training'];
/** Statuses of trials that ended without a usable score. */
export const UNSUCCESSFUL_STATUSES: readonly TrialStatus[] = ['diverged', 'failed', 'timed-out'];

export function isEnded(status: TrialStatus): boolean {
  return ENDED_STATUSES.includes(status);
}

export function isRanked(status: TrialStatus): boolean {
  return RANKED_STATUSES.includes(status);
}

export function isUnsuccessful(status: TrialStatus): boolean {
  return UNSUCCESSFUL_STATUSES.includes(status);
}

/** A job may still come for the trial: it is training or waiting at the end of a rung. */
export function isActive(status: TrialStatus): boolean {
  return status === 'training' || status === 'waiting';
}

/** How many trials ended without a usable score, and the first of them (by id) with its reason. */
export function unsuccessfulTrials(trials: readonly TrialRecord[]): { count: number; first?: { id: number; reason: string } } {
  const failed = trials.filter((t) => isUnsuccessful(t.status)).sort((a, b) => a.id - b.id);
  const first = failed[0];
  if (!first) return { count: 0 };
  return { count: failed.length, first: { id: first.id, reason: first.divergence?.reason ?? first.error ?? first.status } };
}

/**
 * A study whose every trial ended without a score has no result: the one-line error (exit code 1)
 * that says so with the first failure's reason; undefined when some trial succeeded or none ran.
 */
export function noResultError(trials: readonly TrialRecord[], studyFile: string): UserError | undefined {
  const failed = unsuccessfulTrials(trials);
  if (!failed.first || failed.count < trials.length) return undefined;
  return new UserError(
    'E_NO_RESULT',
    `${studyFile}: all ${trials.length} trials ended without a score; the first: trial ${failed.first.id}: ${failed.first.reason}`,
    { exitCode: 1 },
  );
}
