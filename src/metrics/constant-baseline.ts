/**
 * The constant predictor every network must beat, scored on the validation rows with the study's own
 * metrics: the training split's class shares as probabilities for every row (so the majority class is
 * predicted), or the training mean for regression.
 */
import type { Task } from '../core/configuration.js';
import type { BaselineEntry } from '../core/baselines.js';
import { computeMetrics, type Metrics } from './metrics.js';

/** The labels of one training / validation pair (class indices, or the standardised target). */
export interface LabelSplit {
  trainY: Float32Array;
  validationY: Float32Array;
}

/** Training class shares (classification), in class-index order. */
function classShares(trainY: Float32Array, classCount: number): number[] {
  const counts = new Array<number>(classCount).fill(0);
  for (const y of trainY) counts[y] = (counts[y] ?? 0) + 1;
  return counts.map((n) => n / trainY.length);
}

/** Metrics and validation loss of the constant predictor on one split pair. */
function constantMetrics(task: Task, split: LabelSplit, classCount: number, targetScaling?: { mean: number; std: number }): Metrics {
  const rows = split.validationY.length;
  if (task === 'regression') {
    let mean = 0;
    for (const y of split.trainY) mean += y;
    mean /= split.trainY.length;
    const outputs = new Float32Array(rows).fill(mean);
    let squared = 0;
    for (const y of split.validationY) squared += (y - mean) ** 2;
    // The engine's validation loss is the mean squared error on the standardised target.
    return { ...computeMetrics(task, split.validationY, outputs, 1, targetScaling), validationLoss: squared / rows };
  }
  const shares = classShares(split.trainY, classCount);
  const outputCount = task === 'binary' ? 1 : classCount;
  const outputs = new Float32Array(rows * outputCount);
  for (let r = 0; r < rows; r++) {
    if (task === 'binary') outputs[r] = shares[1] ?? 0;
    else for (let c = 0; c < classCount; c++) outputs[r * classCount + c] = shares[c]!;
  }
  const metrics = computeMetrics(task, split.validationY, outputs, outputCount, targetScaling);
  return metrics.logLoss !== undefined ? { ...metrics, validationLoss: metrics.logLoss } : metrics;
}

/**
 * The constant baseline of a study: on its validation split, or with folds the mean over the folds
 * (each fold's own training rows give the constant), as the study's fold means are.
 */
export function constantBaseline(task: Task, splits: readonly LabelSplit[], classCount: number, targetScaling?: (fold: number) => { mean: number; std: number } | undefined): BaselineEntry {
  const each = splits.map((split, i) => constantMetrics(task, split, classCount, targetScaling?.(i)));
  const metrics: Metrics = {};
  for (const key of Object.keys(each[0] ?? {}) as (keyof Metrics)[]) {
    const values = each.map((m) => m[key]).filter((v): v is number => v !== undefined);
    if (values.length === each.length) metrics[key] = values.reduce((a, b) => a + b, 0) / values.length;
  }
  const what = task === 'regression' ? 'the training mean for every row' : 'the training class shares as every row\'s probabilities: the majority class';
  return { metrics, what: splits.length > 1 ? `${what}, mean over ${splits.length} folds` : what };
}
