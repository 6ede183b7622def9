/**
 * `configuration.json` of an export folder: everything needed to use the model without the study
 * file, and the record of how it was chosen and scored.
 */
import type { HandOffComparison } from './hand-off-check.js';
import type { EnsembleDescription } from './ensemble-description.js';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import type { PreprocessingRecipe } from '../data/types.js';
import { UserError } from '../core/errors.js';
import { OPTIMISM_CAUTION } from '../report/caution.js';
import type { StudyDocument } from '../store/types.js';
import type { TrialRecord } from '../core/trial.js';
import type { MetricName, Goal, TrialConfiguration } from '../core/configuration.js';
import type { ClassReport } from '../report/class-report.js';
import type { Metrics } from '../metrics/metrics.js';
import { DEFAULT_THRESHOLD, describeRule, type ThresholdChoice } from './threshold.js';
import { MODEL_FILE, WEIGHTS_FILE, inputNames } from './model-files.js';

export const CONFIGURATION_FILE = 'configuration.json';
export const EXPORT_FORMAT = 'rungwise-export';
export const EXPORT_FORMAT_VERSION = 1;



/** The study's figures of the trial's last epoch, on the validation split. */
export interface LastEpochFigures {
  epoch: number;
  trainLoss: number;
  validationLoss: number;
  metrics: Metrics;
}

/** The study's costs as the export carries them (`data.costs`), so `predict` decides by them. */
export interface ExportCosts {
  /** What a cost is counted in. */
  unit: string;
  /** `matrix[actual][predicted]`: the cost of one row, in the order of the classes. */
  matrix: number[][];
  /** binary: by the threshold (outputs.thresholdChoice says which rule chose it); multiclass: each row gets the class of least expected cost (Elkan, IJCAI 2001). */
  decision: 'threshold' | 'least expected cost';
  /** The constant predictor on the validation rows: the one class that costs least when predicted for every row, and its cost per row. */
  constant: { predicted: string; costPerRow: number };
}

/** What the model's outputs mean. */
export type ModelOutputs =
  | { task: 'binary'; meaning: string; classes: string[]; threshold: number; thresholdChoice: ThresholdChoice }
  | { task: 'multiclass'; meaning: string; classes: string[]; decision?: 'least expected cost' }
  | { task: 'regression'; meaning: string; units: 'target' };

/** How to call `model.onnx`, written into `configuration.json`. */
export interface OnnxDescription {
  file: string;
  input: string;
  output: string;
  /** One float per name, in order, for each row: shape [rows, inputs.length]. */
  inputs: string[];
  numeric: string;
  categorical: string;
  outputMeaning: string;
}

export interface ExportConfiguration {
  format: typeof EXPORT_FORMAT;
  version: typeof EXPORT_FORMAT_VERSION;
  study: string;
  trialId: number;
  /** Rank in the study's ranking when exported. */
  rank: number;
  configuration: TrialConfiguration;
  epochsTrained: number;
  /** With early stopping: the epoch whose weights were exported (the best epoch; without early stopping they are `epochsTrained`'s). */
  weightsEpoch?: number;
  /** With early stopping: the trial's best epoch (its score and weights), and where the rule stopped it. */
  bestEpoch?: number;
  stoppedAtEpoch?: number;
  /** Trial seed: initial weights, dropout masks and each epoch's shuffle. */
  seed: number;
  goal: Goal;
  /** The trial's score: the goal's metric at its last epoch (with early stopping, its best epoch), on the validation split. */
  score: number;
  /** Figures the study recorded for the trial's scored epoch (the last, or the best with early stopping; validation split; for a k-fold study the mean over folds). */
  validation: LastEpochFigures;
  /** Metrics of the exported network on the held-out test split (the study's own, or the retrained one with --retrain), computed once (a binary model's at its threshold). */
  test?: Metrics;
  /** Set with --retrain when the study's own network was kept: its metrics on the same test split, and the two compared (the noise of the difference). */
  studyTest?: Metrics;
  handOff?: HandOffComparison;
  /** Baselines the study recorded on its validation rows (constant and linear), to compare the winner with. */
  baselines?: StudyDocument['baselines'];
  /** Classification: per-class figures and the confusion matrix on the validation split (at the decision threshold for a binary model), and on the test split. */
  classes?: { validation?: ClassReport; test?: ClassReport };
  /** Rows the exported weights were trained on. */
  trainedOn: 'training split' | 'training and validation splits' | 'each fold network on the other folds of the training and validation splits';
  recipe: PreprocessingRecipe;
  /** Network inputs in order: a numeric column's name, or `column=category` for each one-hot input. */
  inputs: string[];
  outputs: ModelOutputs;
  /** With the study's `data.costs`: the cost matrix and the constant predictor's cost. */
  costs?: ExportCosts;
  model: { file: string; weights: string; format: 'tfjs layers model' };
  /** With `--format onnx`: how to call `model.onnx`. */
  onnx?: OnnxDescription;
  /** With `export --ensemble`: the members (each in its own folder), their weights and the ensemble's figures; the fields above describe the single winner (rank 1). */
  ensemble?: EnsembleDescription;
  caution: string;
}

function modelOutputs(recipe: PreprocessingRecipe, threshold: ThresholdChoice | undefined, costs: ExportCosts | undefined): ModelOutputs {
  const classes = recipe.classes ?? [];
  if (recipe.task === 'binary') {
    const choice = threshold ?? defaultThresholdChoice();
    const how = choice.rule === 'none' ? 'the default: the study gives no decisionThreshold rule' : `chosen on the validation split for ${describeRule(choice.rule)}`;
    return {
      task: 'binary',
      classes,
      threshold: choice.threshold,
      thresholdChoice: choice,
      meaning: `one output: the probability of class '${classes[1]}' (sigmoid); '${classes[1]}' is predicted when it is at least ${choice.threshold} (${how})`,
    };
  }
  if (recipe.task === 'multiclass' && costs) {
    return { task: 'multiclass', classes, decision: 'least expected cost', meaning: 'one probability per class, in the order of classes (softmax); the predicted class is the one of least expected cost under costs.matrix' };
  }
  if (recipe.task === 'multiclass') return { task: 'multiclass', classes, meaning: 'one probability per class, in the order of classes (softmax)' };
  return {
    task: 'regression',
    units: 'target',
    meaning: `one output: the predicted '${recipe.target}' in its own units (the target scaling of the recipe is already folded into the output layer)`,
  };
}

/** The last curve point of a trial, as stored in the study. */
export function lastEpochFigures(trial: TrialRecord): LastEpochFigures {
  const last = trial.bestEpoch !== undefined ? trial.curve.find((point) => point.epoch === trial.bestEpoch) : trial.curve.at(-1);
  if (last === undefined) throw new Error(`trial ${trial.id} has no epoch recorded`);
  return { epoch: last.epoch, trainLoss: last.trainLoss, validationLoss: last.validationLoss, metrics: { ...last.metrics } };
}

/** The epoch a trial is scored and exported at: its best with early stopping, else its last. */
export function scoredEpoch(trial: TrialRecord): number {
  return trial.bestEpoch ?? trial.epochsTrained;
}

/** What an export adds to the study's record of the trial. */
export interface ExportFigures {
  /** With --retrain: the study's own network's metrics on the same test split (absent with folds or without a kept checkpoint). */
  studyTest?: Metrics;
  /** With --retrain: the two networks compared on the test split. */
  handOff?: HandOffComparison;
  /** The exported network's metrics on the test split (the retrained model's with --retrain). */
  test?: Metrics;
  /** Binary: the threshold chosen by the study's rule (absent: 0.5, no rule). */
  threshold?: ThresholdChoice;
  classes?: ExportConfiguration['classes'];
  /** True when the network was retrained on training and validation rows (with --retrain, and always for a k-fold study). */
  retrained?: boolean;
  /** With the study's costs. */
  costs?: ExportCosts;
}

/** The record of the 0.5 default when the study gives no rule (no figures: nothing was chosen). */
function defaultThresholdChoice(): ThresholdChoice {
  return { rule: 'none', threshold: DEFAULT_THRESHOLD, chosenOn: 'validation split', rows: 0, precision: null, recall: null, f1: null, ruleMet: true };
}

export function buildConfiguration(doc: StudyDocument, trial: TrialRecord, rank: number, figures: ExportFigures = {}): ExportConfiguration {
  const configuration: ExportConfiguration = {
    format: EXPORT_FORMAT,
    version: EXPORT_FORMAT_VERSION,
    study: doc.name,
    trialId: trial.id,
    rank,
    configuration: { ...trial.configuration },
    epochsTrained: trial.epochsTrained,
    ...(trial.bestEpoch !== undefined ? { weightsEpoch: trial.bestEpoch, bestEpoch: trial.bestEpoch } : {}),
    ...(trial.stoppedAtEpoch !== undefined ? { stoppedAtEpoch: trial.stoppedAtEpoch } : {}),
    seed: trial.seed,
    goal: doc.goal,
    score: trial.score!,
    validation: lastEpochFigures(trial),
    trainedOn: figures.retrained ? 'training and validation splits' : 'training split',
    recipe: doc.recipe,
    inputs: inputNames(doc.recipe),
    outputs: modelOutputs(doc.recipe, figures.threshold, figures.costs),
    model: { file: MODEL_FILE, weights: WEIGHTS_FILE, format: 'tfjs layers model' },
    caution: OPTIMISM_CAUTION,
  };
  if (figures.test) configuration.test = figures.test;
  if (figures.studyTest) configuration.studyTest = figures.studyTest;
  if (figures.handOff) configuration.handOff = figures.handOff;
  if (doc.baselines) configuration.baselines = doc.baselines;
  if (figures.classes) configuration.classes = figures.classes;
  if (figures.costs) configuration.costs = figures.costs;
  return configuration;
}

/** Reads an export folder's configuration; a missing or foreign file is a UserError. */
export async function readConfiguration(dir: string): Promise<ExportConfiguration> {
  const file = path.join(dir, CONFIGURATION_FILE);
  let text: string;
  try {
    text = await readFile(file, 'utf8');
  } catch {
    throw new UserError('E_MODEL', `${file}: not found; --model must be a folder written by \`rungwise export\``);
  }
  let parsed: Partial<ExportConfiguration>;
  try {
    parsed = JSON.parse(text) as Partial<ExportConfiguration>;
  } catch {
    throw new UserError('E_MODEL', `${file}: is not valid JSON; export the model again with \`rungwise export\``);
  }
  if (parsed.format !== EXPORT_FORMAT || parsed.version !== EXPORT_FORMAT_VERSION || parsed.recipe === undefined) {
    throw new UserError('E_MODEL', `${file}: not a rungwise export (expected "format": "${EXPORT_FORMAT}", version ${EXPORT_FORMAT_VERSION})`);
  }
  return parsed as ExportConfiguration;
}

/** The metric names present in both sets, for side-by-side display. */
export function sharedMetricNames(a: Metrics, b: Metrics): MetricName[] {
  return (Object.keys(a) as MetricName[]).filter((name) => b[name] !== undefined);
}
