/**
 * A binary model's decision threshold, chosen on the validation split by the study's
 * `decisionThreshold` rule: the largest F1, or the best recall at a least precision, or the best
 * precision at a least recall. The candidates are the thresholds of the validation
 * precision-recall curve (each distinct predicted probability: the second class is predicted at or
 * above it). Without a rule the threshold stays 0.5.
 */
import type { DecisionThresholdRule } from '../study/definition.js';
import { precisionRecallCurve, type PrecisionRecallPoint } from '../metrics/precision-recall.js';

/** The threshold used when the study gives no rule. */
export const DEFAULT_THRESHOLD = 0.5;

/** How the exported threshold came about, as `configuration.json` records it. */
export interface ThresholdChoice {
  /** The study's rule, or `none` (the 0.5 default). */
  rule: DecisionThresholdRule | 'none';
  threshold: number;
  /** Rows the rule was applied to (0 without a rule). */
  chosenOn: 'validation split';
  rows: number;
  /** The positive class's figures on those rows at `threshold` (null without a rule: nothing was chosen). */
  precision: number | null;
  recall: number | null;
  f1: number | null;
  /** False when no threshold reached the rule's least precision: the most precise one was taken. */
  ruleMet: boolean;
}

const f1Of = (point: PrecisionRecallPoint): number => (point.precision + point.recall === 0 ? 0 : (2 * point.precision * point.recall) / (point.precision + point.recall));

/** The first point (highest threshold) with the largest `score`. */
function best(points: readonly PrecisionRecallPoint[], score: (point: PrecisionRecallPoint) => number): PrecisionRecallPoint {
  let chosen = points[0]!;
  for (const point of points) if (score(point) > score(chosen)) chosen = point;
  return chosen;
}

/**
 * The threshold `rule` picks for `labels` (0/1) and `scores` (P(second class)). Ties go to the
 * higher threshold. A least precision no threshold reaches takes the most precise threshold
 * (`ruleMet: false`); a least recall is always reached (the lowest threshold has recall 1).
 * @throws Error when the rows hold no positive (the split is stratified, so a study's never does).
 */
export function chooseThreshold(rule: DecisionThresholdRule, labels: ArrayLike<number>, scores: ArrayLike<number>): ThresholdChoice {
  const curve = precisionRecallCurve(labels, scores);
  if (curve.length === 0) throw new Error('the validation rows hold no row of the second class; no threshold can be chosen');
  let chosen: PrecisionRecallPoint;
  let ruleMet = true;
  if (rule.choose === 'largest-f1') chosen = best(curve, f1Of);
  else if (rule.choose === 'min-recall') chosen = best(curve.filter((point) => point.recall >= rule.value), (point) => point.precision);
  else {
    const reaching = curve.filter((point) => point.precision >= rule.value);
    ruleMet = reaching.length > 0;
    chosen = ruleMet ? best(reaching, (point) => point.recall) : best(curve, (point) => point.precision);
  }
  return { rule, threshold: chosen.threshold, chosenOn: 'validation split', rows: labels.length, precision: chosen.precision, recall: chosen.recall, f1: f1Of(chosen), ruleMet };
}

/** The rule as words, for messages: `largest F1`, `precision at least 0.9`, `recall at least 0.8`. */
export function describeRule(rule: DecisionThresholdRule | 'none'): string {
  if (rule === 'none') return 'no rule given (the default 0.5)';
  if (rule.choose === 'largest-f1') return 'largest F1';
  return `${rule.choose === 'min-precision' ? 'precision' : 'recall'} at least ${rule.value}`;
}
