/**
 * Class weightings of the training loss, as formulas on the training rows' class counts: the one
 * home of `balanced` and `effective` (used by the study-level `data.classWeights` and by the search
 * space's `classWeights` dimension alike). Weights are normalised so the training rows' mean weight is
 * 1, so a weighted loss keeps the unweighted loss's scale and the learning rate keeps its meaning.
 */

/**
 * The weightings a search space may choose between: `none` (every row the same), `balanced`
 * (n / (classes x n_c)) and `effective` (Cui et al. 2019's inverse effective number of samples).
 */
export const CLASS_WEIGHTINGS = ['none', 'balanced', 'effective'] as const;
export type ClassWeighting = (typeof CLASS_WEIGHTINGS)[number];

/** The `effective` weighting's beta when the space does not give one (Cui et al. 2019, 4.1, CIFAR long-tailed runs). */
export const DEFAULT_EFFECTIVE_BETA = 0.999;

/** The number of training rows of each class index, from the encoded labels. */
export function classCounts(labels: ArrayLike<number>, classCount: number): number[] {
  const counts = new Array<number>(classCount).fill(0);
  for (let i = 0; i < labels.length; i++) counts[labels[i]!]! += 1;
  return counts;
}

/** `balanced`: w_c = n / (classes x n_c), King and Zeng (2001) as scikit-learn's `compute_class_weight('balanced')` states it. */
export function balancedWeights(counts: readonly number[]): number[] {
  const n = counts.reduce((sum, count) => sum + count, 0);
  return counts.map((count) => n / (counts.length * count));
}

/**
 * `effective`: w_c = (1 - beta) / (1 - beta^n_c), the inverse of the effective number of samples
 * E_n = (1 - beta^n) / (1 - beta) (Cui et al., Class-Balanced Loss Based on Effective Number of
 * Samples, CVPR 2019, eq. 3 and 4). beta -> 0 gives equal weights, beta -> 1 the balanced ones.
 */
export function effectiveNumberWeights(counts: readonly number[], beta: number): number[] {
  return counts.map((count) => (1 - beta) / (1 - beta ** count));
}

/** `weights` scaled so that sum_c counts_c * w_c = n: the mean weight over the training rows is 1. */
export function normaliseClassWeights(weights: readonly number[], counts: readonly number[]): number[] {
  const n = counts.reduce((sum, count) => sum + count, 0);
  const total = weights.reduce((sum, weight, c) => sum + weight * counts[c]!, 0);
  return weights.map((weight) => (weight * n) / total);
}

/**
 * The training loss's weight of each class index for a weighting and the training rows' class
 * counts, normalised; undefined for `none` (every row weighs the same). A class without training
 * rows gets weight 0 under `balanced` and `effective` (no row carries it).
 */
export function weightsForCounts(weighting: ClassWeighting, counts: readonly number[], beta = DEFAULT_EFFECTIVE_BETA): number[] | undefined {
  if (weighting === 'none') return undefined;
  const raw = weighting === 'balanced' ? balancedWeights(counts) : effectiveNumberWeights(counts, beta);
  return normaliseClassWeights(raw.map((weight, c) => (counts[c]! > 0 ? weight : 0)), counts);
}
