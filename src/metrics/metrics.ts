/**
 * Validation metrics in plain JavaScript (no tfjs), so they can be checked by hand.
 */
import type { MetricName, Task } from '../core/configuration.js';

export type Metrics = Partial<Record<MetricName, number>>;

/** Probabilities are clipped to [CLIP, 1 - CLIP] before the logarithm in log loss. */
export const PROBABILITY_CLIP = 1e-7;

const clip = (p: number): number => Math.min(1 - PROBABILITY_CLIP, Math.max(PROBABILITY_CLIP, p));

/** Fraction of rows whose predicted class equals the true class. */
export function accuracy(trueClasses: ArrayLike<number>, predictedClasses: ArrayLike<number>): number {
  let hits = 0;
  for (let i = 0; i < trueClasses.length; i++) if (trueClasses[i] === predictedClasses[i]) hits++;
  return hits / trueClasses.length;
}

/**
 * Mean over classes of per-class F1 = 2TP / (2TP + FP + FN). A class with neither true rows nor
 * predictions is skipped; one with true rows but no predictions scores 0.
 */
export function macroF1(trueClasses: ArrayLike<number>, predictedClasses: ArrayLike<number>, classCount: number): number {
  const tp = new Float64Array(classCount);
  const fp = new Float64Array(classCount);
  const fn = new Float64Array(classCount);
  for (let i = 0; i < trueClasses.length; i++) {
    const t = trueClasses[i]!;
    const p = predictedClasses[i]!;
    if (t === p) tp[t]!++;
    else {
      fp[p]!++;
      fn[t]!++;
    }
  }
  let sum = 0;
  let counted = 0;
  for (let c = 0; c < classCount; c++) {
    const denominator = 2 * tp[c]! + fp[c]! + fn[c]!;
    if (denominator === 0) continue;
    sum += (2 * tp[c]!) / denominator;
    counted++;
  }
  return counted === 0 ? Number.NaN : sum / counted;
}

/**
 * Area under the ROC curve by the Mann-Whitney rank statistic, tied scores taking their mean rank
 * (so a positive-negative tie counts half). NaN when either class is absent.
 */
export function auc(labels: ArrayLike<number>, scores: ArrayLike<number>): number {
  const n = labels.length;
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => scores[a]! - scores[b]!);
  let positives = 0;
  let positiveRankSum = 0;
  for (let start = 0; start < n; ) {
    let end = start;
    while (end + 1 < n && scores[order[end + 1]!] === scores[order[start]!]) end++;
    const meanRank = (start + end) / 2 + 1; // ranks are 1-based
    for (let k = start; k <= end; k++) {
      if (labels[order[k]!] === 1) {
        positives++;
        positiveRankSum += meanRank;
      }
    }
    start = end + 1;
  }
  const negatives = n - positives;
  if (positives === 0 || negatives === 0) return Number.NaN;
  return (positiveRankSum - (positives * (positives + 1)) / 2) / (positives * negatives);
}

/** Mean binary cross-entropy of P(class 1) against 0/1 labels. */
export function binaryLogLoss(labels: ArrayLike<number>, probabilities: ArrayLike<number>): number {
  let sum = 0;
  for (let i = 0; i < labels.length; i++) {
    const p = clip(probabilities[i]!);
    sum -= labels[i] === 1 ? Math.log(p) : Math.log(1 - p);
  }
  return sum / labels.length;
}

/** Mean cross-entropy of row-major rows x classCount probabilities against class indices. */
export function multiclassLogLoss(trueClasses: ArrayLike<number>, probabilities: ArrayLike<number>, classCount: number): number {
  let sum = 0;
  for (let i = 0; i < trueClasses.length; i++) sum -= Math.log(clip(probabilities[i * classCount + trueClasses[i]!]!));
  return sum / trueClasses.length;
}

/** Index of the largest value in each row (the first one on ties). */
export function argmaxRows(values: ArrayLike<number>, columns: number): Int32Array {
  const rows = values.length / columns;
  const result = new Int32Array(rows);
  for (let r = 0; r < rows; r++) {
    let best = 0;
    for (let c = 1; c < columns; c++) if (values[r * columns + c]! > values[r * columns + best]!) best = c;
    result[r] = best;
  }
  return result;
}

/** RMSE, MAE and R² (1 - SS_res / SS_tot; omitted when the truth is constant). */
export function regressionMetrics(truth: ArrayLike<number>, predictions: ArrayLike<number>): Metrics {
  const n = truth.length;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += truth[i]!;
  mean /= n;
  let squared = 0;
  let absolute = 0;
  let total = 0;
  for (let i = 0; i < n; i++) {
    const error = predictions[i]! - truth[i]!;
    squared += error * error;
    absolute += Math.abs(error);
    total += (truth[i]! - mean) ** 2;
  }
  const metrics: Metrics = { rmse: Math.sqrt(squared / n), mae: absolute / n };
  if (total > 0) metrics.r2 = 1 - squared / total;
  return metrics;
}

/**
 * The task's validation metrics. `outputs` are the network outputs after the output function:
 * P(class 1) per row (binary), rows x outputCount probabilities (multiclass), or the standardised
 * prediction (regression, mapped back to the target's units with `targetScaling`).
 * Metrics that are undefined for the data (AUC with one class present, R² of a constant target) are omitted.
 * A binary model predicts class 1 from `threshold` on (0.5 during the study; an exported model's own threshold after).
 */
export function computeMetrics(
  task: Task,
  yTrue: Float32Array,
  outputs: Float32Array,
  outputCount: number,
  targetScaling?: { mean: number; std: number },
  threshold = 0.5,
): Metrics {
  if (task === 'regression') {
    const scale = targetScaling ?? { mean: 0, std: 1 };
    const unscale = (values: Float32Array): Float64Array => Float64Array.from(values, (v) => v * scale.std + scale.mean);
    return regressionMetrics(unscale(yTrue), unscale(outputs));
  }
  const trueClasses = Int32Array.from(yTrue);
  const metrics: Metrics = {};
  if (task === 'binary') {
    const predicted = Int32Array.from(outputs, (p) => (p >= threshold ? 1 : 0));
    metrics.accuracy = accuracy(trueClasses, predicted);
    metrics.macroF1 = macroF1(trueClasses, predicted, 2);
    metrics.auc = auc(trueClasses, outputs);
    metrics.logLoss = binaryLogLoss(trueClasses, outputs);
  } else {
    const predicted = argmaxRows(outputs, outputCount);
    metrics.accuracy = accuracy(trueClasses, predicted);
    metrics.macroF1 = macroF1(trueClasses, predicted, outputCount);
    metrics.logLoss = multiclassLogLoss(trueClasses, outputs, outputCount);
  }
  for (const key of Object.keys(metrics) as MetricName[]) if (Number.isNaN(metrics[key])) delete metrics[key];
  return metrics;
}
