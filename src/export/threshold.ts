/**
 * A binary model's decision threshold, chosen on the validation split by the study's
 * `decisionThreshold` rule: the largest F1, or the best recall at a least precision, or the best
 * precision at a least recall, or the least mean cost per row under the study's costs. The candidates are the thresholds of the validation
 * precision-recall curve (each distinct predicted probability: the second class is predicted at or
 * above it). Without a rule the threshold stays 0.5.
 */
import type { DecisionThresholdRule } from '../study/definition.js';
import { precisionRecallCurve, type PrecisionRecallPoint } from '../metrics/precision-recall.js';
import { costAtThreshold, leastCostThreshold, type CostMatrix } from '../metrics/costs.js';

/** The threshold used when the study gives no rule. */
export const DEFAULT_THRESHOLD = 0.5;

/** How the exported threshold came about, as `configuration.json` records it. */
export interface ThresholdChoice {
  /** The study's rule, or `none` (the 0.5 default). */
  rule: DecisionThresholdRule | 'none';
  threshold: number;
  /** Rows the rule was applied to (0 without a rule). */
  chosenOn: 'validation split' | 'out-of-fold outputs';
  rows: number;
  /** The positive class's figures on those rows at `threshold` (null without a rule: nothing was chosen). */
  precision: number | null;
  recall: number | null;
  f1: number | null;
  /** False when no threshold reached the rule's least precision: the most precise one was taken. */
  ruleMet: boolean;
  /** With the study's costs: the mean cost per row on those rows at `threshold`. */
  costPerRow?: number;
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
export function chooseThreshold(rule: DecisionThresholdRule, labels: ArrayLike<number>, scores: ArrayLike<number>, costs?: CostMatrix): ThresholdChoice {
  const curve = precisionRecallCurve(labels, scores);
  if (curve.length === 0) throw new Error('the validation rows hold no row of the second class; no threshold can be chosen');
  if (rule.choose === 'least-cost') {
    if (!costs) throw new Error('the least-cost rule needs the study\'s costs');
    return leastCostChoice(rule, labels, scores, costs);
  }
  let chosen: PrecisionRecallPoint;
  let ruleMet = true;
  if (rule.choose === 'largest-f1') chosen = best(curve, f1Of);
  else if (rule.choose === 'min-recall') chosen = best(curve.filter((point) => point.recall >= rule.value), (point) => point.precision);
  else {
    const reaching = curve.filter((point) => point.precision >= rule.value);
    ruleMet = reaching.length > 0;
    chosen = ruleMet ? best(reaching, (point) => point.recall) : best(curve, (point) => point.precision);
  }
  const cost = costs ? { costPerRow: costAtThreshold(labels, scores, costs, chosen.threshold) } : {};
  return { rule, threshold: chosen.threshold, chosenOn: 'validation split', rows: labels.length, precision: chosen.precision, recall: chosen.recall, f1: f1Of(chosen), ruleMet, ...cost };
}

/** The least-cost threshold with the precision, recall and F1 it gives (0 when it predicts no row of the second class). */
function leastCostChoice(rule: DecisionThresholdRule, labels: ArrayLike<number>, scores: ArrayLike<number>, costs: CostMatrix): ThresholdChoice {
  const { threshold, costPerRow } = leastCostThreshold(labels, scores, costs);
  let truePositives = 0;
  let called = 0;
  let positives = 0;
  for (let i = 0; i < labels.length; i++) {
    if (labels[i] === 1) positives++;
    if (scores[i]! < threshold) continue;
    called++;
    if (labels[i] === 1) truePositives++;
  }
  const point = { threshold, truePositives, falsePositives: called - truePositives, precision: called === 0 ? 0 : truePositives / called, recall: truePositives / positives };
  return { rule, threshold, chosenOn: 'validation split', rows: labels.length, precision: point.precision, recall: point.recall, f1: f1Of(point), ruleMet: true, costPerRow };
}

/** The rule as words, for messages: `largest F1`, `precision at least 0.9`, `recall at least 0.8`. */
export function describeRule(rule: DecisionThresholdRule | 'none'): string {
  if (rule === 'none') return 'no rule given (the default 0.5)';
  if (rule.choose === 'largest-f1') return 'largest F1';
  if (rule.choose === 'least-cost') return 'least cost per row';
  return `${rule.choose === 'min-precision' ? 'precision' : 'recall'} at least ${rule.value}`;
}
