/**
 * The one home of the goal: a trial's score at an epoch, which way is better, comparison, and the
 * single ordering of trials. The progress display, `ranking`, `--json`, `export`, `compare`, the report
 * and the library all rank with {@link rankTrials}; the leader is {@link leaderOf}.
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
 * Whether the trial's training finished: it trained to the study's epoch limit (`trained`), or its
 * early-stopping rule stopped it (the rule's verdict on its epochs). A trial a halving sampler cut at a
 * lower rung (`dropped`), or one still waiting or training, has not finished.
 */
export function isFinished(trial: Pick<TrialRecord, 'status' | 'stoppedEarly'>): boolean {
  return trial.status === 'trained' || trial.stoppedEarly === true;
}

/** Whether the trial carries no health flag (see `core/health.ts`). */
export function isHealthy(trial: Pick<TrialRecord, 'flags'>): boolean {
  return (trial.flags?.length ?? 0) === 0;
}

/**
 * The one ranking rule, the order of merit of two ranked trials:
 * 1. a healthy trial before a flagged one;
 * 2. a finished trial ({@link isFinished}) before one a halving sampler cut or is still training;
 * 3. finished trials by their score (at the best epoch with early stopping); cut trials by the epochs
 *    they reached (a rung index means different epochs in different Hyperband brackets, so it is not
 *    compared), then by their score;
 * 4. the lower id.
 * A total order: the ranking depends only on the trials, never on the order they finished in.
 */
export function compareTrials(a: ScoredTrial, b: ScoredTrial, goal: Pick<Goal, 'better'>): number {
  const sign = goal.better === 'higher' ? -1 : 1;
  const healthy = Number(isHealthy(b)) - Number(isHealthy(a));
  const finished = Number(isFinished(b)) - Number(isFinished(a));
  const reached = isFinished(a) ? 0 : scoredEpochs(b) - scoredEpochs(a);
  return healthy || finished || reached || sign * (a.score - b.score) || a.id - b.id;
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

/**
 * The leader while a study runs and once it ends: rank 1 among the finished trials, or undefined while
 * none has finished. A finished trial's record never changes again, so a new leader only ever ranks
 * above the one it replaces: the leader shown never gets worse as work is added.
 */
export function leaderOf(trials: readonly TrialRecord[], goal: Goal): ScoredTrial | undefined {
  return rankTrials(trials.filter(isFinished), goal)[0]?.trial;
}

/** The goal in words, as the CLI prints it: "auc (higher is better)". */
export function goalInWords(goal: Goal): string {
  return `${goal.metric} (${goal.better} is better)`;
}
