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
/** `cost`: the mean cost per validation row of a classifier's decisions, under the study's `data.costs` (src/metrics/costs.ts). */
export const METRICS = ['accuracy', 'macroF1', 'logLoss', 'auc', 'rmse', 'mae', 'r2', 'validationLoss', 'cost'] as const;

export type Activation = (typeof ACTIVATIONS)[number];
export type OptimizerName = (typeof OPTIMIZERS)[number];
export type Task = (typeof TASKS)[number];
export type MetricName = (typeof METRICS)[number];
export type ScheduleKind = (typeof SCHEDULES)[number];


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
