/**
 * Using an exported model from code: load the folder, then predict rows given as plain objects.
 * The preprocessing recipe is applied exactly as in the study (standardisation, one-hot encoding,
 * imputation of missing values), and a binary model's decision threshold is applied.
 */
import type * as tf from '@tensorflow/tfjs';
import path from 'node:path';
import { existsSync } from 'node:fs';
import { strictInputError, type InputIssue } from '../data/input-checks.js';
import { encodeFeaturesChecked } from '../data/recipe.js';
import type { PreprocessingRecipe } from '../data/types.js';
import { UserError } from '../core/errors.js';
import { argmaxRows } from '../metrics/metrics.js';
import { leastExpectedCostClasses } from '../metrics/costs.js';
import { initBackend } from '../trainers/tfjs/backend.js';
import { readConfiguration, type ExportConfiguration } from './configuration.js';
import { MODEL_FILE, loadLayersModelFromDir, predictRows } from './model-files.js';
import { loadEnsembleMembers, type WeightedNetwork } from './ensemble-files.js';

/** An exported model, ready to predict. Call `dispose()` when done to free its tensors. */
export interface LoadedModel {
  /** The export folder (absolute). */
  dir: string;
  /** `configuration.json`: recipe, classes, metrics, how it was chosen. */
  configuration: ExportConfiguration;
  /** The tfjs Layers network (inputs already encoded, outputs as described in `configuration.outputs`); for an ensemble, its first member. */
  network: tf.LayersModel;
  /** An ensemble's members with their weights (`export --ensemble`, `export --average-folds`); {@link modelOutputs} averages them. */
  members?: readonly WeightedNetwork[];
  dispose(): void;
}

/** One input row: column name to value. Missing, `null`, `undefined` and `''` are imputed as the recipe says. */
export type InputRow = Readonly<Record<string, string | number | boolean | null | undefined>>;

/** A classifier's answer: the class and one probability per class. */
export interface ClassPrediction {
  predicted: string;
  probabilities: Record<string, number>;
}

/** A regression model's answer, in the target's own units. */
export interface ValuePrediction {
  predicted: number;
}

export type Prediction = ClassPrediction | ValuePrediction;

/** The probability at which a binary model predicts its second class: the one chosen at export, else 0.5. */
export function decisionThreshold(configuration: ExportConfiguration): number {
  const outputs = configuration.outputs as { threshold?: number };
  return typeof outputs.threshold === 'number' ? outputs.threshold : 0.5;
}

/**
 * Loads an export folder written by `rungwise export` (or `exportModel`): its `configuration.json`
 * and the tfjs model, read from disk on the tfjs wasm backend.
 * @throws UserError when the folder is not an export.
 * @example
 * import { loadModel, predict } from 'rungwise';
 * const model = await loadModel('runs/demo/export/rank-1');
 * const [answer] = predict(model, [{ vibration_rms_mm_s: 6.1, bearing_temp_c: 71, site_type: 'canal' }]);
 * console.log(answer.predicted, answer.probabilities);
 * model.dispose();
 */
export async function loadModel(exportDir: string): Promise<LoadedModel> {
  const dir = path.resolve(exportDir);
  const configuration = await readConfiguration(dir);
  if (configuration.ensemble) return loadEnsemble(dir, configuration);
  const modelFile = path.join(dir, MODEL_FILE);
  if (!existsSync(modelFile)) throw new UserError('E_MODEL', `${modelFile}: not found; export the model again with \`rungwise export\``);
  await initBackend();
  const network = await loadLayersModelFromDir(dir);
  return { dir, configuration, network, dispose: () => network.dispose() };
}

async function loadEnsemble(dir: string, configuration: ExportConfiguration): Promise<LoadedModel> {
  await initBackend();
  const members = await loadEnsembleMembers(dir, configuration);
  if (members.length === 0) throw new UserError('E_MODEL', `${dir}: configuration.json names no ensemble member; export the ensemble again with \`rungwise export --ensemble\``);
  return { dir, configuration, network: members[0]!.network, members, dispose: () => members.forEach((member) => member.network.dispose()) };
}

/** Encodes the rows being predicted under a recipe: what a fold network with its own recipe reads. */
export type EncodeUnder = (recipe: PreprocessingRecipe) => Float32Array;

/**
 * The model's outputs on encoded rows (row-major `rows x inputCount`): the network's, or for an
 * ensemble the weighted mean of its members' (probabilities for classification, predictions in the
 * target's units for regression). A fold network (`export --average-folds`) reads the rows encoded
 * under its own recipe, which `encodeUnder` gives.
 * @throws Error when a member has its own recipe and `encodeUnder` is not given.
 */
export function modelOutputs(model: LoadedModel, x: Float32Array, rows: number, encodeUnder?: EncodeUnder): Float32Array {
  if (!model.members) return predictRows(model.network, x, rows, model.configuration.recipe.inputCount);
  return weightedOutputs(model.members, model.configuration.recipe, x, rows, encodeUnder);
}

/** The weighted mean of the members' outputs, each on the rows as its own recipe encodes them (the export's `x` otherwise). */
export function weightedOutputs(members: readonly WeightedNetwork[], recipe: PreprocessingRecipe, x: Float32Array, rows: number, encodeUnder?: EncodeUnder): Float32Array {
  let sum: Float64Array | undefined;
  for (const { network, weight, recipe: own } of members) {
    if (own && !encodeUnder) throw new Error('a fold network reads rows under its own recipe: pass encodeUnder');
    const outputs = own ? predictRows(network, encodeUnder!(own), rows, own.inputCount) : predictRows(network, x, rows, recipe.inputCount);
    sum ??= new Float64Array(outputs.length);
    for (let i = 0; i < outputs.length; i++) sum[i] = sum[i]! + weight * outputs[i]!;
  }
  return Float32Array.from(sum ?? []);
}

/** Encodes cells (column to text) under any recipe: the {@link EncodeUnder} of rows being predicted. */
export function encoderOfCells(cells: readonly Record<string, string>[], source: string, lines?: readonly number[]): EncodeUnder {
  return (recipe) => encodeFeaturesChecked(recipe, cells, source, lines).x;
}

function asCell(value: InputRow[string]): string {
  if (value === null || value === undefined) return '';
  if (typeof value === 'number') return Number.isFinite(value) ? String(value) : '';
  return String(value);
}

/** Encodes rows with the export's recipe: row-major `rows x inputCount` network inputs. */
export function encodeRows(configuration: ExportConfiguration, rows: readonly InputRow[], source = 'rows', lines?: readonly number[]): Float32Array {
  return encodeRowsChecked(configuration, rows, source, lines).x;
}

/** {@link encodeRows}, with the unseen and blank categories and missing numbers counted per column. */
export function encodeRowsChecked(configuration: ExportConfiguration, rows: readonly InputRow[], source = 'rows', lines?: readonly number[]): { x: Float32Array; issues: InputIssue[] } {
  return encodeFeaturesChecked(configuration.recipe, asCells(rows), source, lines);
}

/** Rows given as objects, as CSV cells (missing, `null`, `undefined` and non-finite numbers as ''). */
function asCells(rows: readonly InputRow[]): Record<string, string>[] {
  return rows.map((row) => Object.fromEntries(Object.entries(row).map(([column, value]) => [column, asCell(value)])));
}

/**
 * Turns the network's row-major outputs into answers: a binary model's class by its threshold; a
 * multiclass model's by the largest probability, or with the study's costs the class of least
 * expected cost (Elkan, IJCAI 2001).
 */
export function interpretOutputs(configuration: ExportConfiguration, outputs: Float32Array, rows: number): Prediction[] {
  const { recipe } = configuration;
  if (recipe.task === 'regression') return Array.from({ length: rows }, (_, r) => ({ predicted: outputs[r]! }));
  const classes = recipe.classes ?? [];
  if (recipe.task === 'binary') {
    const threshold = decisionThreshold(configuration);
    return Array.from({ length: rows }, (_, r) => {
      const p = outputs[r]!;
      return { predicted: classes[p >= threshold ? 1 : 0]!, probabilities: { [classes[0]!]: 1 - p, [classes[1]!]: p } };
    });
  }
  const costs = configuration.costs;
  const best = costs ? leastExpectedCostClasses(outputs, classes.length, costs.matrix) : argmaxRows(outputs, classes.length);
  return Array.from({ length: rows }, (_, r) => ({
    predicted: classes[best[r]!]!,
    probabilities: Object.fromEntries(classes.map((label, c) => [label, outputs[r * classes.length + c]!])),
  }));
}

export interface PredictOptions {
  /** Refuse (throw) when a row holds a category the training split never held, a blank category or a missing number. @default false */
  strict?: boolean;
}

/** Predictions with what was filled in or could not be placed, per column (see {@link InputIssue}). */
export interface CheckedPredictions {
  predictions: Prediction[];
  /** One entry per column and kind (unseen category, blank category, missing number), with its count and first row. */
  inputIssues: InputIssue[];
}

/**
 * Predicts rows given as objects keyed by column name (other keys, the target included, are ignored).
 * @throws UserError when a feature column is absent from the first row or a numeric one holds text;
 * with `strict`, when any row holds an unseen or blank category or a missing number (E_PREDICT_STRICT).
 * @example
 * const predictions = predict(model, [{ speed_rpm: 2400, site_type: 'canal' }]);
 * // classification: [{ predicted: 'yes', probabilities: { no: 0.18, yes: 0.82 } }]
 * // regression:     [{ predicted: 41.7 }]
 */
export function predict(model: LoadedModel, rows: readonly InputRow[], options: PredictOptions = {}): Prediction[] {
  return predictWithChecks(model, rows, options).predictions;
}

/**
 * {@link predict}, returning also the unseen and blank categories and missing numbers it met, per
 * column with a count and the first row (the `predict` command warns with them).
 * @example
 * const { predictions, inputIssues } = predictWithChecks(model, rows);
 * for (const issue of inputIssues) console.warn(issue.column, issue.kind, issue.count);
 */
export function predictWithChecks(model: LoadedModel, rows: readonly InputRow[], options: PredictOptions = {}): CheckedPredictions {
  const { x, issues } = encodeRowsChecked(model.configuration, rows);
  if (options.strict && issues.length > 0) throw strictInputError(issues, 'rows', 'strict');
  const outputs = modelOutputs(model, x, rows.length, encoderOfCells(asCells(rows), 'rows'));
  return { predictions: interpretOutputs(model.configuration, outputs, rows.length), inputIssues: issues };
}
