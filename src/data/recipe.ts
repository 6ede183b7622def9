import { UserError } from '../core/errors.js';
import { DEFAULT_ENCODING_SETTINGS, DEFAULT_PREPROCESSING, type EncodingSettings, type NumericEncoding, type PreprocessingChoice, type Task } from '../core/configuration.js';
import { applyNumericTransform, fitNumericTransform } from './numeric-inputs.js';
import { encodedWidth, fitNumericEncoding, writeEncoded } from './numeric-encodings.js';
import { isMissing, parseNumber } from './csv.js';
import { countInputIssues, POOLED_INPUT, type InputIssue } from './input-checks.js';

export { POOLED_INPUT };
import { decimalCommaNumber, isNotFinite } from './typing.js';
import type { FeatureRecipe, PreprocessingRecipe } from './types.js';
import type { FeatureValues } from './values.js';

/** How a feature column is typed: decided once over the whole file (a schema fact, not a statistic). */
export interface FeatureColumn {
  name: string;
  kind: 'numeric' | 'categorical';
}

/** A column is numeric when every non-missing value is a finite decimal number; otherwise categorical (the strict rule for row-wise input). */
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
export function meanAndStd(values: readonly number[] | Float64Array): { mean: number; std: number } {
  if (values.length === 0) return { mean: 0, std: 1 };
  let total = 0;
  for (const v of values) total += v;
  const mean = total / values.length;
  let squares = 0;
  for (const v of values) squares += (v - mean) ** 2;
  const std = Math.sqrt(squares / values.length);
  return { mean, std: std > 0 ? std : 1 };
}

/** The target as read: class labels (classification) or numbers (regression). */
export type TargetValues = { kind: 'labels'; codes: Int32Array; labels: string[] } | { kind: 'numbers'; values: Float64Array };

export interface ColumnRecipeOptions {
  task: Task;
  target: string;
  features: readonly FeatureValues[];
  targetValues: TargetValues;
  /** Row indices of the TRAINING split, ascending: every statistic of the recipe comes from them. */
  trainingRows: ArrayLike<number>;
  /** How numeric columns become inputs and which categories are pooled. @default standardise, none pooled */
  preprocessing?: PreprocessingChoice;
  /** The study's encoding settings and seed (the periodic frequencies' stream), for a choice with `numericEncoding`. @default the defaults, seed 0 */
  encoding?: NumericEncodingContext;
}

/** What a numeric encoding is fitted with besides the training values: the study's settings and seed. */
export interface NumericEncodingContext {
  settings: EncodingSettings;
  seed: number;
}

/** Inputs a categorical recipe column takes: one per category, and one for the pooled ones. */
export function categoricalWidth(feature: Extract<FeatureRecipe, { kind: 'categorical' }>): number {
  return feature.categories.length + (feature.pooled ? 1 : 0);
}

/** Inputs a recipe column takes in the network: one-hot categories, a numeric input's encoded width. */
export function featureWidth(feature: FeatureRecipe): number {
  return feature.kind === 'numeric' ? encodedWidth(feature.encoding) : categoricalWidth(feature);
}

/**
 * Network inputs of a recipe's features: each numeric column's encoded width and each categorical
 * column's one-hot width. The one place that counts them: the recipe's `inputCount`, and the weight
 * limit of each configuration's preprocessing choice (`PreparedData.inputCountFor`), come from it.
 */
export function recipeInputCount(features: readonly FeatureRecipe[]): number {
  return features.reduce((total, f) => total + featureWidth(f), 0);
}

/** Inputs of the recipe before any numeric encoding: one per numeric column plus the one-hot inputs (`model.onnx`'s input width). */
export function rawInputCount(recipe: PreprocessingRecipe): number {
  return recipe.features.reduce((total, f) => total + (f.kind === 'numeric' ? 1 : categoricalWidth(f)), 0);
}

/** A numeric column's recipe: mean and std always (the fill), the transform of a choice other than standardise, the encoding of one other than none. */
function numericRecipe(name: string, present: Float64Array, choice: PreprocessingChoice, encoding: NumericEncodingContext): FeatureRecipe {
  const recipe: Extract<FeatureRecipe, { kind: 'numeric' }> = { kind: 'numeric', name, ...meanAndStd(present) };
  if (choice.numericInputs !== 'standardise') recipe.transform = fitNumericTransform(choice.numericInputs, present);
  if (choice.numericEncoding !== undefined && choice.numericEncoding !== 'none') {
    const scaled = present.map((value) => scaledValue(recipe, value));
    recipe.encoding = fitNumericEncoding(choice.numericEncoding, scaled, encoding.settings, encoding.seed, name);
  }
  return recipe;
}

/** A present value of a numeric column after its scaling: the transform, else (x - mean) / std. */
function scaledValue(feature: Extract<FeatureRecipe, { kind: 'numeric' }>, value: number): number {
  return feature.transform ? applyNumericTransform(feature.transform, value) : (value - feature.mean) / feature.std;
}

/** A categorical column's recipe from its training counts: categories seen in fewer than `poolBelow` rows are pooled. */
function categoricalRecipe(name: string, counts: Map<string, number>, poolBelow: number): FeatureRecipe {
  const all = [...counts.keys()].sort();
  // Most frequent; ties go to the first in sorted order so the fill is stable.
  let fill = all[0] ?? '';
  for (const category of all) if (counts.get(category)! > counts.get(fill)!) fill = category;
  const pooled = all.filter((category) => counts.get(category)! < poolBelow);
  if (pooled.length === 0) return { kind: 'categorical', name, categories: all, fill };
  return { kind: 'categorical', name, categories: all.filter((category) => counts.get(category)! >= poolBelow), fill, pooled };
}

function presentNumbers(values: Float64Array, rows: ArrayLike<number>): Float64Array {
  const present: number[] = [];
  for (let i = 0; i < rows.length; i++) {
    const value = values[rows[i]!]!;
    if (!Number.isNaN(value)) present.push(value);
  }
  return Float64Array.from(present);
}

/** Builds the preprocessing recipe from the training rows of typed columns, so validation and test rows never leak into it. */
export function buildColumnRecipe(options: ColumnRecipeOptions): PreprocessingRecipe {
  const { task, target, trainingRows, targetValues } = options;
  const choice = options.preprocessing ?? DEFAULT_PREPROCESSING;
  const encoding = options.encoding ?? { settings: DEFAULT_ENCODING_SETTINGS, seed: 0 };
  const features: FeatureRecipe[] = options.features.map((column): FeatureRecipe => {
    if (column.kind === 'numeric') return numericRecipe(column.name, presentNumbers(column.values, trainingRows), choice, encoding);
    const counts = new Map<string, number>();
    for (let i = 0; i < trainingRows.length; i++) {
      const code = column.codes[trainingRows[i]!]!;
      if (code >= 0) counts.set(column.labels[code]!, (counts.get(column.labels[code]!) ?? 0) + 1);
    }
    return categoricalRecipe(column.name, counts, choice.poolCategoriesBelow);
  });
  const inputCount = recipeInputCount(features);
  const recipe: PreprocessingRecipe = { task, target, features, inputCount };
  if (targetValues.kind === 'numbers') {
    recipe.targetScaling = meanAndStd(Float64Array.from({ length: trainingRows.length }, (_, i) => targetValues.values[trainingRows[i]!]!));
  } else {
    const seen = new Set<string>();
    for (let i = 0; i < trainingRows.length; i++) seen.add(targetValues.labels[targetValues.codes[trainingRows[i]!]!]!);
    recipe.classes = sortLabels(seen);
  }
  return recipe;
}

/** `count` zeros, in a SharedArrayBuffer when `shared`. */
function float32s(count: number, shared: boolean): Float32Array {
  return shared ? new Float32Array(new SharedArrayBuffer(count * 4)) : new Float32Array(count);
}

/**
 * Model inputs for the given rows of typed columns (row-major, `rows.length x recipe.inputCount`):
 * numeric values standardised with the training mean and std, or through the recipe's transform
 * (missing → training mean first), categories one-hot (missing → the training mode; pooled and unseen
 * ones → the pooled input when the column has one, else all zeros). `features` follow the recipe's order.
 * With `shared`, the matrix lives in a SharedArrayBuffer, so worker threads read it without a copy.
 */
export function encodeColumns(recipe: PreprocessingRecipe, features: readonly FeatureValues[], rows: ArrayLike<number>, shared = false): Float32Array {
  const x = float32s(rows.length * recipe.inputCount, shared);
  let offset = 0;
  recipe.features.forEach((feature, f) => {
    const column = features[f]!;
    if (feature.kind === 'numeric' && column.kind === 'numeric') {
      const at = offset;
      const encoding = feature.encoding;
      if (encoding) encodeNumeric(feature, column.values, rows, (r, value) => writeEncoded(encoding, value, x, r * recipe.inputCount + at), true);
      else encodeNumeric(feature, column.values, rows, (r, value) => (x[r * recipe.inputCount + at] = value));
      offset += featureWidth(feature);
    } else if (feature.kind === 'categorical' && column.kind === 'categorical') {
      const place = categoryPlaces(feature);
      const fill = place(feature.fill);
      const index = column.labels.map(place);
      for (let r = 0; r < rows.length; r++) {
        const code = column.codes[rows[r]!]!;
        const hot = code < 0 ? fill : index[code]!;
        if (hot >= 0) x[r * recipe.inputCount + offset + hot] = 1;
      }
      offset += categoricalWidth(feature);
    } else {
      throw new Error(`column '${feature.name}' is ${column.kind} but the recipe says ${feature.kind}`);
    }
  });
  return x;
}

/**
 * Writes each row's scaled value of a numeric column; a missing value stays 0 when standardising
 * (the mean's own input), unless `everyRow` (an encoding, whose inputs at 0 are not all 0).
 */
function encodeNumeric(feature: Extract<FeatureRecipe, { kind: 'numeric' }>, values: Float64Array, rows: ArrayLike<number>, write: (r: number, value: number) => void, everyRow = false): void {
  const transform = feature.transform;
  for (let r = 0; r < rows.length; r++) {
    const value = values[rows[r]!]!;
    if (transform) write(r, applyNumericTransform(transform, Number.isNaN(value) ? feature.mean : value));
    else if (!Number.isNaN(value)) write(r, (value - feature.mean) / feature.std);
    else if (everyRow) write(r, 0);
  }
}

/** A category's input within its column: its own, the pooled one (pooled or unseen, when the column pools), or -1 (none). */
function categoryPlaces(feature: Extract<FeatureRecipe, { kind: 'categorical' }>): (label: string) => number {
  const own = new Map(feature.categories.map((category, i) => [category, i]));
  const pooled = feature.pooled ? feature.categories.length : -1;
  return (label) => own.get(label) ?? pooled;
}

/** Model targets for the given rows: the class index (classification) or the standardised value (regression); `shared` as for {@link encodeColumns}. */
export function encodeTargetValues(recipe: PreprocessingRecipe, target: TargetValues, rows: ArrayLike<number>, shared = false): Float32Array {
  const y = float32s(rows.length, shared);
  if (target.kind === 'numbers') {
    const { mean, std } = recipe.targetScaling ?? { mean: 0, std: 1 };
    for (let r = 0; r < rows.length; r++) y[r] = (target.values[rows[r]!]! - mean) / std;
    return y;
  }
  const index = target.labels.map((label) => recipe.classes?.indexOf(label) ?? -1);
  for (let r = 0; r < rows.length; r++) y[r] = index[target.codes[rows[r]!]!]!;
  return y;
}

// Row-wise input (predictions, small tables): adapters onto the column functions above.

function lineOf(lines: readonly number[] | undefined, index: number): number {
  // Without line numbers, assume one line per row after a header on line 1.
  return lines?.[index] ?? index + 2;
}

function labelsOf(values: readonly string[], missingIs: (value: string) => boolean): { codes: Int32Array; labels: string[] } {
  const labels: string[] = [];
  const index = new Map<string, number>();
  const codes = Int32Array.from(values, (value) => {
    if (missingIs(value)) return -1;
    let code = index.get(value);
    if (code === undefined) index.set(value, (code = labels.push(value) - 1));
    return code;
  });
  return { codes, labels };
}

/**
 * A numeric column of row-wise input read as the column typing reads one (README, "How the CSV is
 * read"): decimal commas when no number of the column has a point, non-finite values as missing;
 * `otherwise` decides for any other cell.
 */
function numericCells(cells: readonly string[], otherwise: (value: string, r: number) => number): Float64Array {
  const points = cells.some((value) => value.includes('.') && parseNumber(value) !== undefined);
  return Float64Array.from(cells, (value, r) => {
    if (isMissing(value) || isNotFinite(value)) return Number.NaN;
    const number = parseNumber(value) ?? (points ? undefined : decimalCommaNumber(value));
    return number ?? otherwise(value, r);
  });
}

function rowValues(feature: FeatureColumn, rows: readonly Record<string, string>[], otherwise: (value: string, r: number) => number): FeatureValues {
  const cells = rows.map((row) => row[feature.name] ?? '');
  if (feature.kind === 'numeric') return { kind: 'numeric', name: feature.name, values: numericCells(cells, otherwise) };
  return { kind: 'categorical', name: feature.name, ...labelsOf(cells, isMissing) };
}

const allRows = (count: number): Int32Array => Int32Array.from({ length: count }, (_, i) => i);

export interface RecipeOptions {
  task: Task;
  target: string;
  features: readonly FeatureColumn[];
  /** The TRAINING rows only: every statistic of the recipe comes from them. Target values must be present. */
  trainingRows: readonly Record<string, string>[];
  /** How numeric columns become inputs and which categories are pooled. @default standardise, none pooled */
  preprocessing?: PreprocessingChoice;
  /** The encoding settings and seed (see {@link ColumnRecipeOptions}). */
  encoding?: NumericEncodingContext;
}

/** Builds the preprocessing recipe from training rows given as records (see {@link buildColumnRecipe}). */
export function buildRecipe(options: RecipeOptions): PreprocessingRecipe {
  const { task, target, trainingRows } = options;
  const features = options.features.map((feature) => rowValues(feature, trainingRows, () => Number.NaN));
  const targets = trainingRows.map((row) => row[target] ?? '');
  const targetValues: TargetValues =
    task === 'regression' ? { kind: 'numbers', values: Float64Array.from(targets, (value) => parseNumber(value) ?? Number.NaN) } : { kind: 'labels', ...labelsOf(targets, () => false) };
  return buildColumnRecipe({ task, target, features, targetValues, trainingRows: allRows(trainingRows.length), ...(options.preprocessing ? { preprocessing: options.preprocessing } : {}), ...(options.encoding ? { encoding: options.encoding } : {}) });
}

/**
 * Turns raw rows into model inputs with {@link encodeColumns}; numeric cells are read as a study reads
 * them (decimal commas, non-finite values as missing). Extra columns are ignored.
 * @throws UserError (E_DATA) when a recipe column is absent or a numeric cell holds text.
 */
export function encodeFeatures(recipe: PreprocessingRecipe, rows: readonly Record<string, string>[], file: string, lines?: readonly number[]): Float32Array {
  return encodeFeaturesChecked(recipe, rows, file, lines).x;
}

/**
 * {@link encodeFeatures}, with the cells it filled in or could not place counted per column
 * (`input-checks.ts`: unseen and blank categories, missing numbers).
 */
export function encodeFeaturesChecked(
  recipe: PreprocessingRecipe,
  rows: readonly Record<string, string>[],
  file: string,
  lines?: readonly number[],
): { x: Float32Array; issues: InputIssue[] } {
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
  const features = recipe.features.map((feature) =>
    rowValues(feature, rows, (value, r) => {
      throw new UserError('E_DATA', `${file}: line ${lineOf(lines, r)}: column '${feature.name}' holds '${value}', expected a number or a missing value`);
    }),
  );
  const cells = recipe.features.map((feature) => rows.map((row) => row[feature.name] ?? ''));
  return { x: encodeColumns(recipe, features, allRows(rows.length)), issues: countInputIssues(recipe, features, cells, lines) };
}

/**
 * Turns target values into model targets: the class index (classification) or the standardised value (regression).
 * @throws UserError (E_DATA) naming the line for a missing value, an unknown class or a non-numeric regression target.
 */
export function encodeTarget(recipe: PreprocessingRecipe, values: readonly string[], file: string, lines?: readonly number[]): Float32Array {
  values.forEach((raw, r) => {
    const where = `${file}: line ${lineOf(lines, r)}: target '${recipe.target}'`;
    if (isMissing(raw)) throw new UserError('E_DATA', `${where} is missing; every row needs a target value`);
    if (recipe.targetScaling !== undefined && parseNumber(raw) === undefined) throw new UserError('E_DATA', `${where} holds '${raw}', expected a number for a regression task`);
    if (recipe.targetScaling === undefined && !(recipe.classes ?? []).includes(raw)) {
      throw new UserError('E_DATA', `${where} holds '${raw}', expected one of the classes ${(recipe.classes ?? []).join(', ')}`);
    }
  });
  const target: TargetValues =
    recipe.targetScaling !== undefined ? { kind: 'numbers', values: Float64Array.from(values, (value) => parseNumber(value)!) } : { kind: 'labels', ...labelsOf(values, () => false) };
  return encodeTargetValues(recipe, target, allRows(values.length));
}

/** A standardised regression output back in the target's own units (identity without scaling). */
export function unscaleTarget(recipe: PreprocessingRecipe, standardised: number): number {
  const scaling = recipe.targetScaling;
  return scaling === undefined ? standardised : standardised * scaling.std + scaling.mean;
}
