import type { Objective } from '../study/definition.js';
import type { TrialRecord } from './types.js';

/** Statuses whose trials are ranked: they trained to the end of a rung. */
const RANKED = new Set(['completed', 'stopped', 'paused']);

export interface RankedTrial {
  rank: number;
  trial: TrialRecord;
}

/**
 * Completed and stopped trials, best first: by the highest rung reached, then by the objective
 * in the study's direction, then by fewer epochs trained, then by lower id.
 */
export function rankTrials(trials: readonly TrialRecord[], objective: Objective): RankedTrial[] {
  const sign = objective.direction === 'maximize' ? -1 : 1;
  return trials
    .filter((t) => RANKED.has(t.status) && t.objective !== null && Number.isFinite(t.objective))
    .sort(
      (a, b) =>
        b.rung - a.rung ||
        sign * (a.objective! - b.objective!) ||
        a.epochsTrained - b.epochsTrained ||
        a.id - b.id,
    )
    .map((trial, index) => ({ rank: index + 1, trial }));
}
