/**
 * The cost goal in plain JavaScript: what a classifier's errors cost per row, given a cost for each
 * cell of the confusion matrix. `matrix[actual][predicted]` is the cost (a gain when negative) of
 * predicting class `predicted` for a row of class `actual`, in the user's own unit per row.
 *
 * Binary: the cost at the threshold with the least cost on the rows (every distinct score, and
 * "never the second class"). Multiclass: each row gets the class of least expected cost under the
 * predicted probabilities, argmin_j sum_i P(i|x) C(i, j) (Elkan, "The Foundations of
 * Cost-Sensitive Learning", IJCAI 2001, Section 2).
 */
import { precisionRecallCurve } from './precision-recall.js';

/** `matrix[actual][predicted]`: the cost of one row, class indices as the model numbers them. */
export type CostMatrix = readonly (readonly number[])[];

/** A binary threshold and the mean cost per row it gives. */
export interface LeastCost {
  /** The second class is predicted at or above it. */
  threshold: number;
  costPerRow: number;
}

const cell = (matrix: CostMatrix, actual: number, predicted: number): number => matrix[actual]![predicted]!;

/** Mean cost per row of the given predicted classes. */
export function costOfPredictions(trueClasses: ArrayLike<number>, predicted: ArrayLike<number>, matrix: CostMatrix): number {
  let sum = 0;
  for (let i = 0; i < trueClasses.length; i++) sum += cell(matrix, trueClasses[i]!, predicted[i]!);
  return sum / trueClasses.length;
}

/** Mean cost per row when the second class is predicted at or above `threshold`. */
export function costAtThreshold(labels: ArrayLike<number>, scores: ArrayLike<number>, matrix: CostMatrix, threshold: number): number {
  return costOfPredictions(labels, Int32Array.from({ length: labels.length }, (_, i) => (scores[i]! >= threshold ? 1 : 0)), matrix);
}

/**
 * The threshold of least mean cost on these rows and that cost. Candidates: each distinct score
 * (rows at or above it are called the second class) and "never the second class" (a threshold
 * halfway between the highest score and 1, or 1 when a score is 1). Ties go to the higher threshold.
 */
export function leastCostThreshold(labels: ArrayLike<number>, scores: ArrayLike<number>, matrix: CostMatrix): LeastCost {
  const n = labels.length;
  let positives = 0;
  let highest = Number.NEGATIVE_INFINITY;
  for (let i = 0; i < n; i++) {
    if (labels[i] === 1) positives++;
    highest = Math.max(highest, scores[i]!);
  }
  const negatives = n - positives;
  const total = (tp: number, fp: number): number =>
    tp * cell(matrix, 1, 1) + (positives - tp) * cell(matrix, 1, 0) + fp * cell(matrix, 0, 1) + (negatives - fp) * cell(matrix, 0, 0);
  let best: LeastCost = { threshold: highest < 1 ? (highest + 1) / 2 : 1, costPerRow: total(0, 0) / n };
  if (highest >= 1) best.costPerRow = costAtThreshold(labels, scores, matrix, 1);
  const points = positives > 0 ? precisionRecallCurve(labels, scores) : allNegativeCurve(scores);
  for (const point of points) {
    const costPerRow = total(point.truePositives, point.falsePositives) / n;
    if (costPerRow < best.costPerRow) best = { threshold: point.threshold, costPerRow };
  }
  return best;
}

/** The curve's counts when no row is of the second class (precisionRecallCurve is empty then). */
function allNegativeCurve(scores: ArrayLike<number>): { threshold: number; truePositives: number; falsePositives: number }[] {
  const sorted = Float64Array.from(scores).sort().reverse();
  const points: { threshold: number; truePositives: number; falsePositives: number }[] = [];
  for (let k = 0; k < sorted.length; k++) {
    if (k + 1 < sorted.length && sorted[k + 1] === sorted[k]) continue;
    points.push({ threshold: sorted[k]!, truePositives: 0, falsePositives: k + 1 });
  }
  return points;
}

/** For each row of row-major `rows x classCount` probabilities, the class of least expected cost (the first on ties). */
export function leastExpectedCostClasses(probabilities: ArrayLike<number>, classCount: number, matrix: CostMatrix): Int32Array {
  const rows = probabilities.length / classCount;
  const chosen = new Int32Array(rows);
  for (let r = 0; r < rows; r++) {
    let bestCost = Number.POSITIVE_INFINITY;
    for (let j = 0; j < classCount; j++) {
      let expected = 0;
      for (let i = 0; i < classCount; i++) expected += probabilities[r * classCount + i]! * cell(matrix, i, j);
      if (expected < bestCost) {
        bestCost = expected;
        chosen[r] = j;
      }
    }
  }
  return chosen;
}

/**
 * The cost of doing nothing clever: the one class predicted for every row that costs least on
 * these rows, and that cost per row (the constant predictor's cost).
 */
export function constantPredictionCost(trueClasses: ArrayLike<number>, classCount: number, matrix: CostMatrix): { predicted: number; costPerRow: number } {
  let best = { predicted: 0, costPerRow: Number.POSITIVE_INFINITY };
  for (let j = 0; j < classCount; j++) {
    const costPerRow = costOfPredictions(trueClasses, new Int32Array(trueClasses.length).fill(j), matrix);
    if (costPerRow < best.costPerRow) best = { predicted: j, costPerRow };
  }
  return best;
}

/**
 * The `cost` metric of one scoring: the mean cost per row on these rows. `outputs`: P(second class)
 * per row (binary, at the least-cost threshold unless `threshold` is given), or row-major
 * probabilities (multiclass, least expected cost per row).
 */
export function costMetric(trueClasses: ArrayLike<number>, outputs: ArrayLike<number>, outputCount: number, matrix: CostMatrix, threshold?: number): number {
  if (matrix.length === 2 && outputCount === 1) {
    return threshold === undefined ? leastCostThreshold(trueClasses, outputs, matrix).costPerRow : costAtThreshold(trueClasses, outputs, matrix, threshold);
  }
  return costOfPredictions(trueClasses, leastExpectedCostClasses(outputs, outputCount, matrix), matrix);
}
