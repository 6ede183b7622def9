import type { TrialParams } from '../study/definition.js';

/** A unit of work: train one configuration from one epoch count to another. */
export interface Job {
  trialId: number;
  params: TrialParams;
  /** Rung index (0 for the first; random search uses 0 only). */
  rung: number;
  /** Bracket index for Hyperband; 0 elsewhere. */
  bracket: number;
  fromEpoch: number;
  toEpoch: number;
  /** Why the trial was promoted into this rung (asynchronous halving sets it), e.g. "rank 2 of 7 at rung 0 (top 2 promotable)". */
  reason?: string;
}

/** What came of a job. `objective` is null when the trial diverged or failed. */
export interface JobOutcome {
  trialId: number;
  rung: number;
  /** Objective at the job's last epoch, already oriented so that smaller is better. */
  loss: number | null;
}

/**
 * The one interface every sampler implements. The run loop asks {@link Sampler.next} whenever a worker
 * is free and reports every finished job; a sampler holds no timers and does no I/O.
 */
export interface Sampler {
  /** The next job, `'wait'` when nothing can start until a running job reports, or `'done'`. */
  next(): Job | 'wait' | 'done';
  /** Record a job's outcome. Outcomes of jobs handed out must each be reported once. */
  report(outcome: JobOutcome): void;
  /** Whether the trial may still be promoted later (its checkpoint must be kept). */
  mayContinue(trialId: number): boolean;
}
