/**
 * One-dimensional Parzen estimators on the unit interval, as the tree-structured Parzen estimator
 * fits them: a mixture of Gaussian kernels truncated to [0, 1], one per observation, plus a wide prior
 * kernel; and a smoothed histogram for categories.
 * Source: Bergstra, Bardenet, Bengio, Kégl, "Algorithms for Hyper-Parameter Optimization", NeurIPS 2011,
 * section 4 (kernels at the observations, bandwidth from the neighbours, a prior component; From memory
 * for the clipping constants).
 */
import type { Rng } from '../random/streams.js';

/** How kernel widths are chosen. */
export type BandwidthRule = 'neighbour-gap' | 'scott';
export const BANDWIDTH_RULES = ['neighbour-gap', 'scott'] as const satisfies readonly BandwidthRule[];

/** Centre and width of the prior kernel: the middle of the unit interval, as wide as the interval. */
export const PRIOR_MEAN = 0.5;
export const PRIOR_SIGMA = 1;

/** A mixture of Gaussian kernels truncated to [0, 1]. */
export interface NumericParzen {
  means: number[];
  sigmas: number[];
  weights: number[];
  /** Each kernel's probability mass inside [0, 1] (its truncation normaliser). */
  masses: number[];
}

export interface ParzenSettings {
  /** Weight of the prior kernel (or prior pseudo-count spread over the categories), against 1 per observation. */
  wideKernelWeight: number;
  bandwidth: BandwidthRule;
}

/**
 * The error function; |error| <= 1.5e-7.
 * Source: Abramowitz, Stegun, Handbook of Mathematical Functions, 1964, formula 7.1.26.
 */
export function erf(x: number): number {
  const sign = x < 0 ? -1 : 1;
  const z = Math.abs(x);
  const t = 1 / (1 + 0.3275911 * z);
  const poly = t * (0.254829592 + t * (-0.284496736 + t * (1.421413741 + t * (-1.453152027 + t * 1.061405429))));
  return sign * (1 - poly * Math.exp(-z * z));
}

/** Standard normal distribution function. */
export function normalCdf(x: number): number {
  return 0.5 * (1 + erf(x / Math.SQRT2));
}

const INV_SQRT_2PI = 1 / Math.sqrt(2 * Math.PI);

/**
 * Kernel widths for observations `points` (unit coordinates) beside a prior kernel at the centre.
 * 'neighbour-gap': the larger of the distances to the left and right neighbour among the observations
 * and the prior's centre (one neighbour at the ends). Source: Bergstra et al. 2011, section 4 (From memory).
 * 'scott': one width for all, 1.059 sd n^(-1/5). Source: Scott, "Multivariate Density Estimation", 1992,
 * normal reference rule (From memory).
 * Both are clipped to [PRIOR_SIGMA / min(100, k + 1), PRIOR_SIGMA] for k kernels (From memory).
 */
export function bandwidths(points: readonly number[], rule: BandwidthRule, withPrior: boolean): number[] {
  const kernels = points.length + (withPrior ? 1 : 0);
  const low = PRIOR_SIGMA / Math.min(100, kernels + 1);
  const clip = (sigma: number) => Math.min(PRIOR_SIGMA, Math.max(low, sigma));
  if (points.length === 0) return [];
  if (rule === 'scott') {
    const n = points.length;
    const mean = points.reduce((sum, x) => sum + x, 0) / n;
    const sd = n > 1 ? Math.sqrt(points.reduce((sum, x) => sum + (x - mean) ** 2, 0) / (n - 1)) : PRIOR_SIGMA;
    return points.map(() => clip(1.059 * sd * n ** -0.2));
  }
  const centres = withPrior ? [...points, PRIOR_MEAN] : [...points];
  const order = centres.map((_, i) => i).sort((a, b) => centres[a]! - centres[b]! || a - b);
  const sigmas = new Array<number>(points.length);
  order.forEach((index, position) => {
    if (index >= points.length) return; // the prior keeps its own width
    const left = position > 0 ? centres[index]! - centres[order[position - 1]!]! : -Infinity;
    const right = position < order.length - 1 ? centres[order[position + 1]!]! - centres[index]! : -Infinity;
    const gap = Math.max(left, right);
    sigmas[index] = clip(Number.isFinite(gap) ? gap : PRIOR_SIGMA);
  });
  return sigmas;
}

/** The Parzen estimator of observations `points` in [0, 1]: equal weights 1 / (n + w), the prior w / (n + w). */
export function fitNumeric(points: readonly number[], settings: ParzenSettings): NumericParzen {
  const withPrior = settings.wideKernelWeight > 0;
  const means = [...points];
  const sigmas = bandwidths(points, settings.bandwidth, withPrior);
  if (withPrior) {
    means.push(PRIOR_MEAN);
    sigmas.push(PRIOR_SIGMA);
  }
  const total = points.length + settings.wideKernelWeight;
  const weights = means.map((_, i) => (i < points.length ? 1 : settings.wideKernelWeight) / total);
  const masses = means.map((mean, i) => normalCdf((1 - mean) / sigmas[i]!) - normalCdf((0 - mean) / sigmas[i]!));
  return { means, sigmas, weights, masses };
}

/** The density of the mixture at x in [0, 1]. */
export function numericDensity(parzen: NumericParzen, x: number): number {
  let density = 0;
  for (let i = 0; i < parzen.means.length; i++) {
    const sigma = parzen.sigmas[i]!;
    const z = (x - parzen.means[i]!) / sigma;
    density += (parzen.weights[i]! * INV_SQRT_2PI * Math.exp(-0.5 * z * z)) / (sigma * parzen.masses[i]!);
  }
  return density;
}

/** Index drawn with probability proportional to `weights` (which sum to 1). */
export function drawIndex(weights: readonly number[], u: number): number {
  let cumulative = 0;
  for (let i = 0; i < weights.length; i++) {
    cumulative += weights[i]!;
    if (u < cumulative) return i;
  }
  return weights.length - 1;
}

/** A standard normal draw from two uniforms (Box and Muller, 1958). */
function standardNormal(rng: Rng): number {
  const u = 1 - rng(); // in (0, 1]
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng());
}

/**
 * A draw from the mixture: pick a kernel by weight, then a Gaussian with its width times
 * `bandwidthFactor`, redrawn until it lands in [0, 1] (clamped after 64 tries).
 */
export function sampleNumeric(parzen: NumericParzen, rng: Rng, bandwidthFactor = 1): number {
  const i = drawIndex(parzen.weights, rng());
  const mean = parzen.means[i]!;
  const sigma = parzen.sigmas[i]! * bandwidthFactor;
  let x = mean;
  for (let attempt = 0; attempt < 64; attempt++) {
    x = mean + sigma * standardNormal(rng);
    if (x >= 0 && x <= 1) return x;
  }
  return Math.min(1, Math.max(0, x));
}

/**
 * Category probabilities from observed choice indices: each observation counts 1, the prior adds w
 * spread evenly, p_k = (count_k + w / K) / (n + w) (the same weights as the numeric mixture).
 */
export function fitCategorical(indices: readonly number[], choices: number, wideKernelWeight: number): number[] {
  const counts = new Array<number>(choices).fill(wideKernelWeight / choices);
  for (const index of indices) counts[index]! += 1;
  const total = indices.length + wideKernelWeight;
  return counts.map((count) => count / total);
}
