/**
 * The one definition of a trial's status groups. A trial is `running` while a job trains it, `paused`
 * at the end of a rung while the sampler may still continue it, and ends in one of the ended statuses.
 */
import type { TrialStatus } from '../store/types.js';

/** Statuses from which no job will continue the trial. */
export const ENDED_STATUSES: readonly TrialStatus[] = ['completed', 'stopped', 'diverged', 'failed', 'timed-out'];
/** Statuses of trials that trained to the end of a rung: they are ranked. */
export const RANKED_STATUSES: readonly TrialStatus[] = ['completed', 'stopped', 'paused'];
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
  return status === 'running' || status === 'paused';
}
