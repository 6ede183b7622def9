/**
 * Early stopping inside a trial: after each epoch the rule looks at the goal's score and says
 * whether this epoch is the best so far and whether the trial stops here. The state it needs to go
 * on (the best epoch and its score) travels in the trial's checkpoint, so a trial continued from a
 * checkpoint decides exactly as one trained straight through.
 *
 * - `patience`: an epoch improves when its score beats the best by more than `minDelta` (in the
 *   goal's direction); the trial stops after `patience` epochs in a row without an improvement.
 *   Common practice (no source).
 * - `generalisation-loss`: Prechelt, "Early Stopping - But When?", Neural Networks: Tricks of the
 *   Trade, LNCS 1524, 1998, section 2.1: GL(t) = 100 (E_va(t) / E_opt(t) - 1) with E_opt(t) the
 *   lowest validation error up to t; stop after the first epoch with GL(t) > alpha. E is the goal as
 *   an error: the metric itself for a lower-is-better metric (log loss, RMSE, MAE, validation loss,
 *   all at least 0), and 1 - the metric for a higher-is-better one (accuracy, macro F1, AUC, R², all
 *   at most 1, so 1 - accuracy is the error rate). A goal whose direction is not its metric's own is
 *   refused when the study is loaded. With E_opt = 0, GL is 0 while E stays 0 and infinite otherwise.
 *
 * An epoch without a finite score (e.g. AUC with one class) is never an improvement.
 */
import { LOWER_IS_BETTER, type Goal } from './configuration.js';
import { beats } from './configuration.js';

/** The rule a study names in `earlyStopping` (the study file's schema is `earlyStoppingSchema` in `study/definition.ts`). */
export type EarlyStoppingRule = { rule: 'patience'; patience: number; minDelta: number } | { rule: 'generalisation-loss'; alpha: number };

/** What the rule carries from epoch to epoch (and in checkpoints). */
export interface EarlyStoppingState {
  /** 1-based epoch of the best score so far. */
  bestEpoch: number;
  /** The goal's score at `bestEpoch`. */
  bestScore: number;
}

/** A job's early-stopping settings: the rule and the goal it judges. */
export interface EarlyStoppingSettings {
  rule: EarlyStoppingRule;
  goal: Goal;
}

/** The goal's score as Prechelt's error E (at least 0, smaller is better). */
export function errorOf(score: number, goal: Goal): number {
  return goal.better === 'lower' ? score : 1 - score;
}

/** Prechelt's generalisation loss GL = 100 (E / E_opt - 1), in percent. */
export function generalisationLoss(error: number, bestError: number): number {
  if (bestError === 0) return error === 0 ? 0 : Number.POSITIVE_INFINITY;
  return 100 * (error / bestError - 1);
}

/** Whether `score` improves on the best so far under the rule. */
function improves(rule: EarlyStoppingRule, goal: Goal, score: number, best: number): boolean {
  if (rule.rule === 'patience') return goal.better === 'higher' ? score > best + rule.minDelta : score < best - rule.minDelta;
  return beats(score, best, goal.better);
}

/**
 * The rule after `epoch` with the goal's score `score` (null: not finite): the new state, whether
 * this epoch is the new best, and whether the trial stops after it.
 */
export function observeEpoch(
  settings: EarlyStoppingSettings,
  state: EarlyStoppingState | undefined,
  epoch: number,
  score: number | null,
): { state: EarlyStoppingState | undefined; improved: boolean; stop: boolean } {
  const { rule, goal } = settings;
  const improved = score !== null && (state === undefined || improves(rule, goal, score, state.bestScore));
  const next = improved ? { bestEpoch: epoch, bestScore: score } : state;
  let stop: boolean;
  if (rule.rule === 'patience') stop = epoch - (next?.bestEpoch ?? 0) >= rule.patience;
  else stop = score !== null && next !== undefined && generalisationLoss(errorOf(score, goal), errorOf(next.bestScore, goal)) > rule.alpha;
  return { state: next, improved, stop };
}

/** The definition-level check: the generalisation-loss rule needs a goal that reads as an error (undefined: fine). */
export function earlyStoppingProblem(rule: EarlyStoppingRule | undefined, goal: Goal): string | undefined {
  if (rule?.rule !== 'generalisation-loss') return undefined;
  const natural = LOWER_IS_BETTER.has(goal.metric) ? 'lower' : 'higher';
  if (goal.better === natural) return undefined;
  return `rule "generalisation-loss" needs the goal as an error, but goal ${goal.metric} with better "${goal.better}" is not one; use rule "patience", or the metric's own direction (${natural})`;
}
