/**
 * Class weights of the training loss (`data.classWeights`): per class, from the training rows only,
 * normalised so that the training rows' mean weight is 1 (so a weighted loss keeps the unweighted
 * loss's scale and the learning rate keeps its meaning).
 */
import { UserError } from '../core/errors.js';
import type { DataSettings } from '../study/definition.js';
import { balancedWeights, classCounts, normaliseClassWeights } from '../core/class-weighting.js';

export { classCounts, normaliseClassWeights };

export type ClassWeightSetting = NonNullable<DataSettings['classWeights']>;

/**
 * The weight of each class before normalisation. `balanced`: {@link balancedWeights} (core); a map:
 * the given weight, 1 for a class it does not name.
 */
export function rawClassWeights(setting: ClassWeightSetting, classes: readonly string[], counts: readonly number[]): number[] {
  if (setting === 'balanced') return balancedWeights(counts);
  if (setting === 'none') return classes.map(() => 1);
  return classes.map((label) => setting[label] ?? 1);
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
