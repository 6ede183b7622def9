import { UserError } from '../errors.js';
import type { Task } from '../study/definition.js';
import { isMissing, parseNumber } from './csv.js';
import type { FeatureRecipe, PreprocessingRecipe } from './types.js';

/** How a feature column is typed: decided once over the whole file (a schema fact, not a statistic). */
export interface FeatureColumn {
  name: string;
  kind: 'numeric' | 'categorical';
}

/** A column is numeric when every non-missing value is a finite decimal number; otherwise categorical. */
export function columnKind(values: Iterable<string>): FeatureColumn['kind'] {
  for (const value of values) {
    if (!isMissing(value) && parseNumber(value) === undefined) return 'categorical';
  }
  return 'numeric';
}

/** Sorts labels numerically when every one is a number, else by code unit (locale-independent). */
export function sortLabels(labels: Iterable<string>): string[] {
  const list = [...new Set(labels)];
  if (list.every((label) => parseNumber(label) !== undefined)) {
    return list.sort((a, b) => parseNumber(a)! - parseNumber(b)! || (a < b ? -1 : a > b ? 1 : 0));
  }
  return list.sort();
}

/** Mean and population standard deviation; std is 1 for a constant (or empty) column so encoding never divides by 0. */
export function meanAndStd(values: readonly number[]): { mean: number; std: number } {
  if (values.length === 0) return { mean: 0, std: 1 };
  const mean = values.reduce((a, b) => a + b, 0) / values.length;
  const variance = values.reduce((sum, v) => sum + (v - mean) ** 2, 0) / values.length;
  const std = Math.sqrt(variance);
  return { mean, std: std > 0 ? std : 1 };
}

export interface RecipeOptions {
  task: Task;
  target: string;
  features: readonly FeatureColumn[];
  /** The TRAINING rows only: every statistic of the recipe comes from them. Target values must be present. */
  trainingRows: readonly Record<string, string>[];
}

/** Builds the preprocessing recipe from the training rows alone, so validation and test rows never leak into it. */
export function buildRecipe(options: RecipeOptions): PreprocessingRecipe {
  const { task, target, trainingRows } = options;
  const features: FeatureRecipe[] = options.features.map((column): FeatureRecipe => {
    const present = trainingRows.map((row) => row[column.name] ?? '').filter((value) => !isMissing(value));
    if (column.kind === 'numeric') {
      return { kind: 'numeric', name: column.name, ...meanAndStd(present.map((value) => parseNumber(value)!)) };
    }
    const counts = new Map<string, number>();
    // Values are compared as parsed: csv-parse already trimmed unquoted cells, quoted text is kept as written.
    for (const value of present) counts.set(value, (counts.get(value) ?? 0) + 1);
    const categories = [...counts.keys()].sort();
    // Most frequent; ties go to the first in sorted order so the fill is stable.
    let fill = categories[0] ?? '';
    for (const category of categories) if (counts.get(category)! > counts.get(fill)!) fill = category;
    return { kind: 'categorical', name: column.name, categories, fill };
  });
  const inputCount = features.reduce((sum, f) => sum + (f.kind === 'numeric' ? 1 : f.categories.length), 0);
  const recipe: PreprocessingRecipe = { task, target, features, inputCount };
  const targets = trainingRows.map((row) => row[target] ?? '');
  if (task === 'regression') recipe.targetScaling = meanAndStd(targets.map((value) => parseNumber(value) ?? Number.NaN));
  else recipe.classes = sortLabels(targets);
  return recipe;
}

function lineOf(lines: readonly number[] | undefined, index: number): number {
  // Without line numbers, assume one line per row after a header on line 1.
  return lines?.[index] ?? index + 2;
}

/**
 * Turns raw rows into model inputs (row-major, `rows.length x recipe.inputCount`): numeric values
 * standardised with the training mean and std (missing → training mean → 0), categories one-hot
 * (missing → the training mode, unseen → all zeros). Extra columns are ignored.
 * @throws UserError (E_DATA) when a recipe column is absent or a numeric cell holds text.
 */
export function encodeFeatures(recipe: PreprocessingRecipe, rows: readonly Record<string, string>[], file: string, lines?: readonly number[]): Float32Array {
  const x = new Float32Array(rows.length * recipe.inputCount);
  const first = rows[0];
  if (first !== undefined) {
    const absent = recipe.features.filter((f) => !Object.hasOwn(first, f.name)).map((f) => f.name);
    if (absent.length > 0) {
      throw new UserError(
        'E_DATA',
        `${file}: column${absent.length > 1 ? 's' : ''} ${absent.map((n) => `'${n}'`).join(', ')} missing; the model needs ${recipe.features.map((f) => `'${f.name}'`).join(', ')}`,
      );
    }
  }
  rows.forEach((row, r) => {
    let offset = r * recipe.inputCount;
    for (const feature of recipe.features) {
      const value = row[feature.name] ?? '';
      if (feature.kind === 'numeric') {
        if (!isMissing(value)) {
          const number = parseNumber(value);
          if (number === undefined) {
            throw new UserError('E_DATA', `${file}: line ${lineOf(lines, r)}: column '${feature.name}' holds '${value}', expected a number or a missing value`);
          }
          x[offset] = (number - feature.mean) / feature.std;
        }
        offset += 1;
      } else {
        const category = isMissing(value) ? feature.fill : value;
        const index = feature.categories.indexOf(category);
        if (index >= 0) x[offset + index] = 1;
        offset += feature.categories.length;
      }
    }
  });
  return x;
}

/**
 * Turns target values into model targets: the class index (classification) or the standardised value (regression).
 * @throws UserError (E_DATA) naming the line for a missing value, an unknown class or a non-numeric regression target.
 */
export function encodeTarget(recipe: PreprocessingRecipe, values: readonly string[], file: string, lines?: readonly number[]): Float32Array {
  const y = new Float32Array(values.length);
  values.forEach((raw, r) => {
    const where = `${file}: line ${lineOf(lines, r)}: target '${recipe.target}'`;
    if (isMissing(raw)) throw new UserError('E_DATA', `${where} is missing; every row needs a target value`);
    if (recipe.targetScaling !== undefined) {
      const number = parseNumber(raw);
      if (number === undefined) throw new UserError('E_DATA', `${where} holds '${raw}', expected a number for a regression task`);
      y[r] = (number - recipe.targetScaling.mean) / recipe.targetScaling.std;
    } else {
      const index = recipe.classes?.indexOf(raw) ?? -1;
      if (index < 0) throw new UserError('E_DATA', `${where} holds '${raw}', expected one of the classes ${(recipe.classes ?? []).join(', ')}`);
      y[r] = index;
    }
  });
  return y;
}

/** A standardised regression output back in the target's own units (identity without scaling). */
export function unscaleTarget(recipe: PreprocessingRecipe, standardised: number): number {
  const scaling = recipe.targetScaling;
  return scaling === undefined ? standardised : standardised * scaling.std + scaling.mean;
}
