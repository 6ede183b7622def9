/**
 * The one home of the objective: its value at an epoch, its orientation, comparison, and the single
 * ordering of trials. The progress display, `ranking`, `--json`, `export`, the report and the library
 * all rank with {@link rankTrials}.
 */
import type { CurvePoint, TrialRecord } from '../store/types.js';
import type { Objective } from './definition.js';
import { isRanked } from './trial-status.js';

/** The objective metric's value at one epoch, or null when it was not recorded or is not finite. */
export function objectiveAt(point: Pick<CurvePoint, 'validationLoss' | 'metrics'>, objective: Pick<Objective, 'metric'>): number | null {
  const value = objective.metric === 'validationLoss' ? point.validationLoss : point.metrics[objective.metric];
  return value !== undefined && Number.isFinite(value) ? value : null;
}

/** The objective turned into a loss for samplers: smaller is better; null stays null. */
export function orientedLoss(value: number | null, objective: Pick<Objective, 'direction'>): number | null {
  if (value === null) return null;
  return objective.direction === 'maximize' ? -value : value;
}

/** True when `a` is strictly better than `b` in the objective's direction. */
export function beats(a: number, b: number, direction: Objective['direction']): boolean {
  return direction === 'maximize' ? a > b : a < b;
}

/** A trial with a finite objective at its scored point. */
export type ScoredTrial = TrialRecord & { objective: number };

/** Whether the trial has a finite score. */
export function isScored(trial: TrialRecord): trial is ScoredTrial {
  return typeof trial.objective === 'number' && Number.isFinite(trial.objective);
}

/** Epochs the trial had trained at the point its objective was scored. */
export function scoredEpochs(trial: TrialRecord): number {
  return trial.epochsTrained;
}

/**
 * The order of merit of two ranked trials: more epochs trained at the scored point first (a rung index
 * means different epochs in different Hyperband brackets, so it is not compared), then the better
 * objective in the study's direction, then the lower id. A total order: the ranking depends only on
 * the trials, never on the order they finished in.
 */
export function compareTrials(a: ScoredTrial, b: ScoredTrial, objective: Pick<Objective, 'direction'>): number {
  const sign = objective.direction === 'maximize' ? -1 : 1;
  return scoredEpochs(b) - scoredEpochs(a) || sign * (a.objective - b.objective) || a.id - b.id;
}

export interface RankedTrial {
  /** 1-based. */
  rank: number;
  trial: ScoredTrial;
}

/** Ranked trials (completed, stopped, paused, or running past a scored rung; with a finite score), best first. */
export function rankTrials(trials: readonly TrialRecord[], objective: Objective): RankedTrial[] {
  return trials
    .filter((t): t is ScoredTrial => isRanked(t.status) && isScored(t))
    .sort((a, b) => compareTrials(a, b, objective))
    .map((trial, index) => ({ rank: index + 1, trial }));
}
