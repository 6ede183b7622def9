/**
 * Class weights of the training loss (`data.classWeights`): per class, from the training rows only,
 * normalised so that the training rows' mean weight is 1 (so a weighted loss keeps the unweighted
 * loss's scale and the learning rate keeps its meaning).
 */
import { UserError } from '../core/errors.js';
import type { DataSettings } from '../study/definition.js';

export type ClassWeightSetting = NonNullable<DataSettings['classWeights']>;

/** The number of training rows of each class index, from the encoded labels. */
export function classCounts(labels: ArrayLike<number>, classCount: number): number[] {
  const counts = new Array<number>(classCount).fill(0);
  for (let i = 0; i < labels.length; i++) counts[labels[i]!]! += 1;
  return counts;
}

/**
 * The weight of each class before normalisation. `balanced`: w_c = n / (classes x n_c), the
 * formula of King and Zeng (2001) as scikit-learn's `compute_class_weight('balanced')` states it;
 * a map: the given weight, 1 for a class it does not name.
 */
export function rawClassWeights(setting: ClassWeightSetting, classes: readonly string[], counts: readonly number[]): number[] {
  if (setting === 'balanced') {
    const n = counts.reduce((sum, count) => sum + count, 0);
    return counts.map((count) => n / (classes.length * count));
  }
  if (setting === 'none') return classes.map(() => 1);
  return classes.map((label) => setting[label] ?? 1);
}

/** `weights` scaled so that sum_c counts_c * w_c = n: the mean weight over the training rows is 1. */
export function normaliseClassWeights(weights: readonly number[], counts: readonly number[]): number[] {
  const n = counts.reduce((sum, count) => sum + count, 0);
  const total = weights.reduce((sum, weight, c) => sum + weight * counts[c]!, 0);
  return weights.map((weight) => (weight * n) / total);
}

/**
 * The training loss's weight of each class index (`classes` in output order, `trainLabels` the
 * training split's class indices), or undefined when every row weighs the same (`none`).
 */
export function trainingClassWeights(setting: ClassWeightSetting, classes: readonly string[], trainLabels: ArrayLike<number>): number[] | undefined {
  if (setting === 'none') return undefined;
  const counts = classCounts(trainLabels, classes.length);
  return normaliseClassWeights(rawClassWeights(setting, classes, counts), counts);
}

/** Refuses a weight map that names a class the target column does not hold, before any row is encoded. */
export function checkClassWeightLabels(setting: ClassWeightSetting, classes: readonly string[], target: string, definitionFile: string): void {
  if (typeof setting === 'string') return;
  for (const label of Object.keys(setting)) {
    if (!classes.includes(label)) {
      const shown = classes.slice(0, 12).map((c) => `'${c}'`).join(', ');
      throw new UserError('E_DATA', `${definitionFile}: data.classWeights.${label}: '${label}' is not a class of column '${target}'; expected one of ${shown}${classes.length > 12 ? ` and ${classes.length - 12} more` : ''}`);
    }
  }
}
