/**
 * How a numeric column becomes one model input, fitted on the training rows only (README and
 * docs/training.md, "Preprocessing choices"):
 *
 * - `standardise`: (x - mean) / std, the training mean and population standard deviation.
 * - `robust-clip`: z = (x - median) / s, with s the interquartile range (half the range when that is
 *   0; a constant column gives 0), then the smooth clip z / sqrt(1 + (z / 3)^2), which stays in
 *   (-3, 3). Source: Holzmüller, Grinsztajn and Steinwart, "Better by Default: Strong Pre-Tuned MLPs
 *   and Boosted Trees on Tabular Data", NeurIPS 2024, the RealMLP preprocessing ("robust scaling and
 *   smooth clipping"); the fallback to half the range and the clip constant 3 as in their published
 *   transform (RobustScaleSmoothClipTransform), read with the search tool; the paper's text from memory.
 * - `normal-quantiles`: the training quantiles at probabilities 0, 1/(K-1), ..., 1 (K at most
 *   {@link QUANTILE_KNOTS}) are mapped onto the standard normal's quantiles at the same probabilities
 *   (clipped to [1e-7, 1 - 1e-7], so the ends are about -5.2 and 5.2), and a value is placed by
 *   piecewise-linear interpolation between those knots (constant beyond the ends). Tied quantiles
 *   become one knot at the mean of their normal scores. Common practice (no source): a quantile
 *   transform to a normal output, as statistics packages offer it.
 *
 * Quantiles are the linear interpolation between order statistics (Hyndman and Fan's type 7).
 * Missing values are filled with the training mean before the transform, whichever it is.
 */
import type { NumericInputs } from '../core/configuration.js';

/** The largest number of knots of a quantile transform. Common practice (no source): about 100 quantiles keep the recipe and the ONNX graph small. */
export const QUANTILE_KNOTS = 101;
/** Probabilities are kept this far from 0 and 1 before the normal quantile. Common practice (no source). */
export const PROBABILITY_BOUND = 1e-7;
/** The smooth clip's bound. Source: Holzmüller et al. 2024 (see the file's comment). */
export const SMOOTH_CLIP = 3;

/** A numeric column's transform beyond standardising; absent in a recipe: standardise. */
export type NumericTransform =
  | {
      kind: 'robust-clip';
      /** Training median. */
      centre: number;
      /** Interquartile range, else half the range; 0 for a constant column (every value encodes as 0). */
      scale: number;
    }
  | {
      kind: 'normal-quantiles';
      /** Training quantiles, strictly increasing. */
      knots: number[];
      /** The standard normal's quantile at each knot's probability. */
      scores: number[];
    };

/** The p-quantile of ascending values: linear interpolation between order statistics (type 7). */
export function quantileOfSorted(sorted: ArrayLike<number>, p: number): number {
  const n = sorted.length;
  if (n === 0) return Number.NaN;
  const h = (n - 1) * p;
  const low = Math.floor(h);
  const high = Math.min(n - 1, low + 1);
  return sorted[low]! + (h - low) * (sorted[high]! - sorted[low]!);
}

/**
 * The standard normal's quantile function at p, p clipped to [1e-7, 1 - 1e-7].
 * Source: Wichura, "Algorithm AS 241: The Percentage Points of the Normal Distribution", Applied
 * Statistics 37(3), 1988, PPND16 (the coefficients of its first two regions; the clip keeps p out of the third).
 */
export function normalQuantile(p: number): number {
  const clipped = Math.min(1 - PROBABILITY_BOUND, Math.max(PROBABILITY_BOUND, p));
  const q = clipped - 0.5;
  if (Math.abs(q) <= 0.425) {
    const r = 0.180625 - q * q;
    const num = ((((((2509.0809287301226727 * r + 33430.575583588128105) * r + 67265.770927008700853) * r + 45921.953931549871457) * r + 13731.693765509461125) * r + 1971.5909503065514427) * r + 133.14166789178437745) * r + 3.387132872796366608;
    const den = ((((((5226.495278852854561 * r + 28729.085735721942674) * r + 39307.89580009271061) * r + 21213.794301586595867) * r + 5394.1960214247511077) * r + 687.1870074920579083) * r + 42.313330701600911252) * r + 1;
    return (q * num) / den;
  }
  const r = Math.sqrt(-Math.log(q < 0 ? clipped : 1 - clipped)) - 1.6;
  const num = ((((((7.7454501427834140764e-4 * r + 0.0227238449892691845833) * r + 0.24178072517745061177) * r + 1.27045825245236838258) * r + 3.64784832476320460504) * r + 5.7694972214606914055) * r + 4.6303378461565452959) * r + 1.42343711074968357734;
  const den = ((((((1.05075007164441684324e-9 * r + 5.475938084995344946e-4) * r + 0.0151986665636164571966) * r + 0.14810397642748007459) * r + 0.68976733498510000455) * r + 1.6763848301838038494) * r + 2.05319162663775882187) * r + 1;
  return q < 0 ? -num / den : num / den;
}

/** Robust scale of ascending values: median and interquartile range (half the range when 0). */
function robustClipOf(sorted: Float64Array): NumericTransform {
  if (sorted.length === 0) return { kind: 'robust-clip', centre: 0, scale: 0 };
  const spread = quantileOfSorted(sorted, 0.75) - quantileOfSorted(sorted, 0.25);
  const scale = spread > 0 ? spread : 0.5 * (sorted[sorted.length - 1]! - sorted[0]!);
  return { kind: 'robust-clip', centre: quantileOfSorted(sorted, 0.5), scale };
}

/** Quantile knots of ascending values with their normal scores; tied knots merged at the mean score. */
function normalQuantilesOf(sorted: Float64Array): NumericTransform {
  const count = Math.min(QUANTILE_KNOTS, sorted.length);
  const knots: number[] = [];
  const scores: number[] = [];
  let tied = 0;
  for (let i = 0; i < count; i++) {
    const p = count === 1 ? 0.5 : i / (count - 1);
    const knot = quantileOfSorted(sorted, p);
    const score = normalQuantile(p);
    const last = knots.length - 1;
    if (last >= 0 && knot === knots[last]) {
      tied++;
      scores[last] = scores[last]! + (score - scores[last]!) / (tied + 1);
    } else {
      knots.push(knot);
      scores.push(score);
      tied = 0;
    }
  }
  return { kind: 'normal-quantiles', knots, scores };
}

/** Fits the transform of a numeric column on its present training values (any order). */
export function fitNumericTransform(kind: Exclude<NumericInputs, 'standardise'>, values: Float64Array): NumericTransform {
  const sorted = Float64Array.from(values).sort();
  return kind === 'robust-clip' ? robustClipOf(sorted) : normalQuantilesOf(sorted);
}

/** The smooth clip z / sqrt(1 + (z / 3)^2). */
export function smoothClip(z: number): number {
  return z / Math.sqrt(1 + (z / SMOOTH_CLIP) ** 2);
}

/** Piecewise-linear interpolation through (knots, scores), constant beyond the ends. */
export function interpolateKnots(knots: readonly number[], scores: readonly number[], x: number): number {
  const last = knots.length - 1;
  if (last < 0) return 0;
  if (x <= knots[0]!) return scores[0]!;
  if (x >= knots[last]!) return scores[last]!;
  let low = 0;
  let high = last;
  while (high - low > 1) {
    const middle = (low + high) >> 1;
    if (knots[middle]! <= x) low = middle;
    else high = middle;
  }
  const t = (x - knots[low]!) / (knots[high]! - knots[low]!);
  return scores[low]! + t * (scores[high]! - scores[low]!);
}

/** One value through a fitted transform (the value is present: missing ones are filled before). */
export function applyNumericTransform(transform: NumericTransform, x: number): number {
  if (transform.kind === 'robust-clip') return transform.scale > 0 ? smoothClip((x - transform.centre) / transform.scale) : 0;
  return interpolateKnots(transform.knots, transform.scores, x);
}
