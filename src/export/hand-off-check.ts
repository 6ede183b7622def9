/**
 * `export --retrain` never silently worse: the study's own network and the retrained one scored on
 * the same test rows, and the paired bootstrap standard error of their difference as the noise.
 * Source: Efron, Tibshirani, "An Introduction to the Bootstrap", 1993, ch. 6 (the bootstrap estimate
 * of a standard error; from memory), resampling the test rows once for both models (paired).
 */
import { beats, type Goal, type MetricName } from '../core/configuration.js';
import { unscaleTarget } from '../data/recipe.js';
import type { PreprocessingRecipe, SplitArrays } from '../data/types.js';
import { computeMetrics, regressionMetrics, type Metrics } from '../metrics/metrics.js';
import { stream } from '../random/streams.js';

/** Bootstrap resamples of the test rows (common practice (no source): 200 suffice for a standard error). */
export const BOOTSTRAP_RESAMPLES = 200;

/** What `export --retrain` reports of the two networks on the test split. */
export interface HandOffComparison {
  /** The metric compared: the goal's, or log loss / RMSE when the goal (validation loss) has no test figure. */
  metric: MetricName;
  better: Goal['better'];
  study: number;
  retrained: number;
  /** Retrained minus study. */
  difference: number;
  /** Paired bootstrap standard error of the difference. */
  standardError: number;
  /** True when the retrained network is worse than the study's by more than one standard error. */
  worse: boolean;
  method: string;
}

function metricsOf(recipe: PreprocessingRecipe, y: Float32Array, outputs: Float32Array, columns: number, threshold: number): Metrics {
  if (recipe.task === 'regression') return regressionMetrics(Float64Array.from(y, (v) => unscaleTarget(recipe, v)), outputs);
  return computeMetrics(recipe.task, y, outputs, columns, undefined, threshold);
}

function resample(y: Float32Array, outputs: Float32Array, columns: number, rows: readonly number[]): { y: Float32Array; outputs: Float32Array } {
  const ys = new Float32Array(rows.length);
  const out = new Float32Array(rows.length * columns);
  rows.forEach((row, i) => {
    ys[i] = y[row]!;
    for (let c = 0; c < columns; c++) out[i * columns + c] = outputs[row * columns + c]!;
  });
  return { y: ys, outputs: out };
}

/**
 * Both networks' outputs on the test split (rows x `columns`), compared on the goal's metric.
 * The resampling stream is keyed by `seed`, so the figures are the same on every run.
 */
export function compareOnTest(recipe: PreprocessingRecipe, split: SplitArrays, study: Float32Array, retrained: Float32Array, columns: number, goal: Goal, threshold: number, seed: number): HandOffComparison | undefined {
  const first = metricsOf(recipe, split.y, study, columns, threshold);
  const fallback: MetricName = recipe.task === 'regression' ? 'rmse' : 'logLoss';
  const metric = first[goal.metric] !== undefined ? goal.metric : fallback;
  const better = metric === goal.metric ? goal.better : 'lower';
  const studyScore = first[metric];
  const retrainedScore = metricsOf(recipe, split.y, retrained, columns, threshold)[metric];
  if (studyScore === undefined || retrainedScore === undefined) return undefined;
  const rng = stream(seed, 'hand-off-bootstrap');
  const differences: number[] = [];
  for (let b = 0; b < BOOTSTRAP_RESAMPLES; b++) {
    const rows = Array.from({ length: split.rows }, () => Math.floor(rng() * split.rows));
    const a = resample(split.y, study, columns, rows);
    const r = resample(split.y, retrained, columns, rows);
    const d = (metricsOf(recipe, r.y, r.outputs, columns, threshold)[metric] ?? NaN) - (metricsOf(recipe, a.y, a.outputs, columns, threshold)[metric] ?? NaN);
    if (Number.isFinite(d)) differences.push(d);
  }
  const mean = differences.reduce((s, d) => s + d, 0) / differences.length;
  const standardError = Math.sqrt(differences.reduce((s, d) => s + (d - mean) ** 2, 0) / Math.max(1, differences.length - 1));
  const difference = retrainedScore - studyScore;
  const shifted = better === 'higher' ? retrainedScore + standardError : retrainedScore - standardError;
  return {
    metric,
    better,
    study: studyScore,
    retrained: retrainedScore,
    difference,
    standardError,
    worse: beats(studyScore, shifted, better),
    method: `paired bootstrap over the ${split.rows} test rows, ${differences.length} resamples (Efron and Tibshirani 1993)`,
  };
}
