/**
 * The precision-recall curve of one class against the rest and its average precision, in plain
 * JavaScript (no tfjs). A row is called positive when its score is at least the threshold; one point
 * per distinct score, highest threshold first.
 */

/** One threshold of the curve: the counts and shares when rows scoring at least `threshold` are called positive. */
export interface PrecisionRecallPoint {
  threshold: number;
  truePositives: number;
  falsePositives: number;
  precision: number;
  recall: number;
}

/** The curve over every distinct score (ties form one point), highest threshold first; empty without positive rows. */
export function precisionRecallCurve(labels: ArrayLike<number>, scores: ArrayLike<number>): PrecisionRecallPoint[] {
  const n = labels.length;
  let positives = 0;
  for (let i = 0; i < n; i++) if (labels[i] === 1) positives++;
  if (positives === 0) return [];
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => scores[b]! - scores[a]!);
  const points: PrecisionRecallPoint[] = [];
  let truePositives = 0;
  let falsePositives = 0;
  for (let k = 0; k < n; ) {
    const threshold = scores[order[k]!]!;
    while (k < n && scores[order[k]!] === threshold) {
      if (labels[order[k]!] === 1) truePositives++;
      else falsePositives++;
      k++;
    }
    points.push({ threshold, truePositives, falsePositives, precision: truePositives / (truePositives + falsePositives), recall: truePositives / positives });
  }
  return points;
}

/**
 * Average precision, AP = sum_n (R_n - R_(n-1)) P_n over the curve's thresholds from the highest
 * down (R_0 = 0): the step-wise area under the precision-recall curve, never interpolated
 * (Davis and Goadrich, "The Relationship Between Precision-Recall and ROC Curves", ICML 2006, on
 * why linear interpolation between PR points is wrong; the formula as scikit-learn's
 * `average_precision_score` documents it). NaN without positive rows.
 */
export function averagePrecision(labels: ArrayLike<number>, scores: ArrayLike<number>): number {
  const curve = precisionRecallCurve(labels, scores);
  if (curve.length === 0) return Number.NaN;
  let area = 0;
  let previousRecall = 0;
  for (const point of curve) {
    area += (point.recall - previousRecall) * point.precision;
    previousRecall = point.recall;
  }
  return area;
}
