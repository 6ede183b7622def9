/**
 * When a trial counts as diverged: a loss that stops being finite, or a validation loss that runs away
 * to more than {@link RUNAWAY_FACTOR} times the loss of the best constant prediction (regression on the
 * standardised target: mean squared error 1; binary: log loss ln 2; multiclass: cross-entropy ln k).
 * Such a trial's figures say nothing about its configuration but flatten every chart's axis.
 */
import type { Task } from '../../core/configuration.js';

export const RUNAWAY_FACTOR = 1000;

/** The loss of predicting a constant: what an untrained network should roughly match. */
export function constantPredictionLoss(task: Task, outputCount: number): number {
  if (task === 'regression') return 1;
  if (task === 'binary') return Math.LN2;
  return Math.log(Math.max(2, outputCount));
}

/** Why the epoch's figures end the trial as diverged, or undefined when they do not. `epoch` is 1-based. */
export function divergenceReason(epoch: number, trainLoss: number, validationLoss: number, task: Task, outputCount: number): string | undefined {
  if (!Number.isFinite(trainLoss)) return `training loss became ${trainLoss} at epoch ${epoch}`;
  if (!Number.isFinite(validationLoss)) return `validation loss became ${validationLoss} at epoch ${epoch}`;
  const limit = RUNAWAY_FACTOR * constantPredictionLoss(task, outputCount);
  if (validationLoss > limit) {
    return `validation loss ran away to ${Number(validationLoss.toPrecision(3))} at epoch ${epoch} (more than ${RUNAWAY_FACTOR} times a constant prediction's ${Number((limit / RUNAWAY_FACTOR).toPrecision(3))})`;
  }
  return undefined;
}
