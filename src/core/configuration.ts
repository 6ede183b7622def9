/**
 * The vocabulary every layer shares: what a trial's configuration is, the tasks, the metrics, and the
 * goal a study ranks by. Plain values and types; the study file's schema builds on them.
 */
import type { ClassWeighting } from './class-weighting.js';

/** Activations a hidden layer may use. `leakyRelu` uses slope 0.2 below zero (the tfjs layers default). */
export const ACTIVATIONS = ['relu', 'leakyRelu', 'elu', 'selu', 'tanh', 'sigmoid', 'softplus', 'swish', 'relu6'] as const;
export const OPTIMIZERS = ['sgd', 'momentum', 'adam'] as const;
export const TASKS = ['binary', 'multiclass', 'regression'] as const;
export const CLASSIFICATION_METRICS = ['accuracy', 'macroF1', 'logLoss'] as const;
export const BINARY_METRICS = [...CLASSIFICATION_METRICS, 'auc'] as const;
export const REGRESSION_METRICS = ['rmse', 'mae', 'r2'] as const;
export const SCHEDULES = ['constant', 'step', 'cosine'] as const;
/** Hidden-layer widths: `constant` (every layer `width`) or `funnel` (halved per layer; src/core/size.ts). */
export const SHAPES = ['constant', 'funnel'] as const;
/** How hidden layers are stacked: `plain` (dense, activation, dropout) or `residual` blocks with layer normalisation (src/core/size.ts). */
export const BLOCKS = ['plain', 'residual'] as const;
/**
 * How numeric columns become inputs (src/data/numeric-inputs.ts): `standardise` (training mean and
 * standard deviation, the default), `robust-clip` (median and interquartile range, then a smooth clip
 * to (-3, 3)), `normal-quantiles` (the training quantiles mapped onto a standard normal's).
 */
export const NUMERIC_INPUTS = ['standardise', 'robust-clip', 'normal-quantiles'] as const;
/**
 * How each numeric input (after `numericInputs`) is expanded before the network (src/data/numeric-encodings.ts):
 * `none` (one input, the default), `piecewise-linear` (one input per quantile bin) or `periodic`
 * (sines and cosines at fixed frequencies). Gorishniy, Rubachev and Babenko, NeurIPS 2022.
 */
export const NUMERIC_ENCODINGS = ['none', 'piecewise-linear', 'periodic'] as const;
/** `cost`: the mean cost per validation row of a classifier's decisions, under the study's `data.costs` (src/metrics/costs.ts). */
export const METRICS = ['accuracy', 'macroF1', 'logLoss', 'auc', 'rmse', 'mae', 'r2', 'validationLoss', 'cost'] as const;

export type Activation = (typeof ACTIVATIONS)[number];
export type OptimizerName = (typeof OPTIMIZERS)[number];
export type Task = (typeof TASKS)[number];
export type MetricName = (typeof METRICS)[number];
export type ScheduleKind = (typeof SCHEDULES)[number];
export type Shape = (typeof SHAPES)[number];
export type Block = (typeof BLOCKS)[number];
export type NumericInputs = (typeof NUMERIC_INPUTS)[number];
export type NumericEncoding = (typeof NUMERIC_ENCODINGS)[number];


/** One point of the search space: what a trial trains (a trial's configuration). */
export interface TrialConfiguration {
  depth: number;
  width: number;
  activation: Activation;
  learningRate: number;
  batchSize: number;
  optimizer: OptimizerName;
  l2: number;
  dropout: number;
  /** Present only when the space has a `schedule` (src/core/schedule.ts); absent: constant. */
  schedule?: ScheduleKind;
  /** Warm-up epochs (present with `schedule`). */
  warmupEpochs?: number;
  /** step only (present when the space's schedule kinds include step). */
  gamma?: number;
  stepEpochs?: number;
  /** cosine only (present when the space's schedule kinds include cosine). */
  minFactor?: number;
  /**
   * Present only when the space has `classWeights` (src/core/class-weighting.ts): the training loss's
   * class weighting, computed from the training rows by the trainer; absent: the study's `data.classWeights`.
   */
  classWeights?: ClassWeighting;
  /** Cui et al.'s beta, present when `classWeights` is `effective` (the space's `effectiveBeta`). */
  effectiveBeta?: number;
  /**
   * Decoupled weight decay lambda: each step shrinks every kernel by lambda times the schedule's
   * multiplier (Loshchilov and Hutter, ICLR 2019); absent: none.
   */
  weightDecay?: number;
  /** Gradient-norm clipping: all gradients together are scaled down to this norm when above it (Pascanu et al., ICML 2013); absent: none. */
  maxGradientNorm?: number;
  /** Label smoothing epsilon, classification only (Szegedy et al., CVPR 2016, section 7); absent: none. */
  labelSmoothing?: number;
  /** Present only when the space has a `shape`; absent: constant (every hidden layer `width` units). */
  shape?: Shape;
  /** Present only when the space has a `block`; absent: plain. */
  block?: Block;
  /** Present only when the space has `numericInputs`; absent: `standardise`. */
  numericInputs?: NumericInputs;
  /** Present only when the space has `poolCategoriesBelow`; absent: 0 (every training category its own input). */
  poolCategoriesBelow?: number;
  /** Present only when the space has `numericEncoding`; absent: `none`. */
  numericEncoding?: NumericEncoding;
}

/** The preprocessing a configuration trains on: one prepared data set per distinct choice. */
export interface PreprocessingChoice {
  numericInputs: NumericInputs;
  /** Categories seen in fewer training rows than this share one input; 0: none are pooled. */
  poolCategoriesBelow: number;
  /** How numeric inputs are expanded; absent: `none`. */
  numericEncoding?: NumericEncoding;
}

/** The default: what every study trained on before the choice was searchable. */
export const DEFAULT_PREPROCESSING: PreprocessingChoice = { numericInputs: 'standardise', poolCategoriesBelow: 0 };

/** A configuration's preprocessing, with the defaults for absent fields. */
export function preprocessingOf(configuration: Pick<TrialConfiguration, 'numericInputs' | 'poolCategoriesBelow' | 'numericEncoding'>): PreprocessingChoice {
  const choice: PreprocessingChoice = { numericInputs: configuration.numericInputs ?? 'standardise', poolCategoriesBelow: configuration.poolCategoriesBelow ?? 0 };
  if (configuration.numericEncoding !== undefined && configuration.numericEncoding !== 'none') choice.numericEncoding = configuration.numericEncoding;
  return choice;
}

/** True when a search space searches preprocessing (`numericInputs`, `poolCategoriesBelow` or `numericEncoding`): its trials may train on more than one data set. */
export function searchesPreprocessing(space: { numericInputs?: readonly unknown[] | undefined; poolCategoriesBelow?: readonly unknown[] | undefined; numericEncoding?: readonly unknown[] | undefined }): boolean {
  return space.numericInputs !== undefined || space.poolCategoriesBelow !== undefined || space.numericEncoding !== undefined;
}

/** One key per distinct preprocessing choice (the data sets and recipes prepared per choice are kept by it). */
export function preprocessingKey(choice: PreprocessingChoice): string {
  return `${choice.numericInputs}/${choice.poolCategoriesBelow}/${choice.numericEncoding ?? 'none'}`;
}

/** True for the default choice (the study's own recipe). */
export function isDefaultPreprocessing(choice: PreprocessingChoice): boolean {
  return (
    choice.numericInputs === DEFAULT_PREPROCESSING.numericInputs &&
    choice.poolCategoriesBelow === DEFAULT_PREPROCESSING.poolCategoriesBelow &&
    (choice.numericEncoding ?? 'none') === 'none'
  );
}

/**
 * The settings of the numeric encodings, one per study (the space's `encodingBins`,
 * `periodicFrequencies`, `periodicScale`; src/data/numeric-encodings.ts).
 */
export interface EncodingSettings {
  /** Piecewise-linear: the most quantile bins per numeric input (fewer when it has fewer distinct values). */
  bins: number;
  /** Periodic: frequencies per numeric input; each gives a sine and a cosine input. */
  frequencies: number;
  /** Periodic: the standard deviation sigma of the normal distribution the frequencies are drawn from. */
  scale: number;
}

/** The defaults of {@link EncodingSettings} (docs/training.md says where each comes from). */
export const DEFAULT_ENCODING_SETTINGS: EncodingSettings = { bins: 8, frequencies: 16, scale: 0.1 };

/** A space's encoding settings with the defaults for absent keys. */
export function encodingSettingsOf(space: { encodingBins?: number | undefined; periodicFrequencies?: number | undefined; periodicScale?: number | undefined }): EncodingSettings {
  return {
    bins: space.encodingBins ?? DEFAULT_ENCODING_SETTINGS.bins,
    frequencies: space.periodicFrequencies ?? DEFAULT_ENCODING_SETTINGS.frequencies,
    scale: space.periodicScale ?? DEFAULT_ENCODING_SETTINGS.scale,
  };
}



/** What the study ranks trials by: a validation metric and which way is better. */
export interface Goal {
  metric: MetricName;
  better: 'higher' | 'lower';
}

/** True when score `a` is strictly better than score `b`. */
export function beats(a: number, b: number, better: Goal['better']): boolean {
  return better === 'higher' ? a > b : a < b;
}

export const LOWER_IS_BETTER: ReadonlySet<MetricName> = new Set(['logLoss', 'rmse', 'mae', 'validationLoss', 'cost']);



/** Metrics each task reports every epoch (besides training and validation loss). */
export function metricsForTask(task: Task): readonly MetricName[] {
  if (task === 'binary') return ['accuracy', 'macroF1', 'auc', 'logLoss'];
  if (task === 'multiclass') return ['accuracy', 'macroF1', 'logLoss'];
  return ['rmse', 'mae', 'r2'];
}
