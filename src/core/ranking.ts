/**
 * The one home of the goal: a trial's score at an epoch, which way is better, comparison, and the
 * single ordering of trials. The progress display, `ranking`, `--json`, `export`, the report and the
 * library all rank with {@link rankTrials}.
 */
import type { CurvePoint, TrialRecord } from './trial.js';
import type { Goal } from './configuration.js';
import { isRanked } from './trial-status.js';

/** The goal metric's value at one epoch, or null when it was not recorded or is not finite. */
export function scoreAt(point: Pick<CurvePoint, 'validationLoss' | 'metrics'>, goal: Pick<Goal, 'metric'>): number | null {
  const value = goal.metric === 'validationLoss' ? point.validationLoss : point.metrics[goal.metric];
  return value !== undefined && Number.isFinite(value) ? value : null;
}

/** k-fold studies: the standard error of the goal's fold mean at an epoch; undefined without folds. */
export function standardErrorAt(point: Pick<CurvePoint, 'standardErrors'>, goal: Pick<Goal, 'metric'>): number | undefined {
  const value = point.standardErrors?.[goal.metric];
  return value !== undefined && Number.isFinite(value) ? value : undefined;
}

/** A score turned into a loss for samplers: smaller is better; null stays null. */
export function orientedLoss(value: number | null, goal: Pick<Goal, 'better'>): number | null {
  if (value === null) return null;
  return goal.better === 'higher' ? -value : value;
}

/** A trial with a finite score at its scored point. */
export type ScoredTrial = TrialRecord & { score: number };

/** Whether the trial has a finite score. */
export function isScored(trial: TrialRecord): trial is ScoredTrial {
  return typeof trial.score === 'number' && Number.isFinite(trial.score);
}

/**
 * Epochs the trial had trained at the point it was scored. A trial early stopping ended counts with
 * the epochs its last job (its rung) gave it, not fewer: stopping is the rule's verdict on those epochs.
 */
export function scoredEpochs(trial: TrialRecord): number {
  if (trial.stoppedEarly) return Math.max(trial.epochsTrained, trial.jobs.at(-1)?.toEpoch ?? 0);
  return trial.epochsTrained;
}

/**
 * The order of merit of two ranked trials: more epochs trained at the scored point first (a rung index
 * means different epochs in different Hyperband brackets, so it is not compared), then the better
 * score, then the lower id. A total order: the ranking depends only on the trials, never on the order
 * they finished in.
 */
export function compareTrials(a: ScoredTrial, b: ScoredTrial, goal: Pick<Goal, 'better'>): number {
  const sign = goal.better === 'higher' ? -1 : 1;
  return scoredEpochs(b) - scoredEpochs(a) || sign * (a.score - b.score) || a.id - b.id;
}

export interface RankedTrial {
  /** 1-based. */
  rank: number;
  trial: ScoredTrial;
}

/** Ranked trials (trained, dropped, waiting, or training past a scored rung; with a finite score), best first. */
export function rankTrials(trials: readonly TrialRecord[], goal: Goal): RankedTrial[] {
  return trials
    .filter((t): t is ScoredTrial => isRanked(t.status) && isScored(t))
    .sort((a, b) => compareTrials(a, b, goal))
    .map((trial, index) => ({ rank: index + 1, trial }));
}

/** The goal in words, as the CLI prints it: "auc (higher is better)". */
export function goalInWords(goal: Goal): string {
  return `${goal.metric} (${goal.better} is better)`;
}
