/**
 * The study's fixed vocabularies (activations, optimizers, tasks, metrics, schedules) without the
 * schema: worker threads import these, and loading zod there would cost each thread about 0.25 s.
 * `definition.ts` re-exports them.
 */

/** Activations a hidden layer may use. `leakyRelu` uses slope 0.2 below zero (the tfjs layers default). */
export const ACTIVATIONS = ['relu', 'leakyRelu', 'elu', 'selu', 'tanh', 'sigmoid', 'softplus', 'swish', 'relu6'] as const;
export const OPTIMIZERS = ['sgd', 'momentum', 'adam'] as const;
export const TASKS = ['binary', 'multiclass', 'regression'] as const;
export const CLASSIFICATION_METRICS = ['accuracy', 'macroF1', 'logLoss'] as const;
export const BINARY_METRICS = [...CLASSIFICATION_METRICS, 'auc'] as const;
export const REGRESSION_METRICS = ['rmse', 'mae', 'r2'] as const;
export const SCHEDULES = ['constant', 'step', 'cosine'] as const;
export const METRICS = ['accuracy', 'macroF1', 'logLoss', 'auc', 'rmse', 'mae', 'r2', 'validationLoss'] as const;

export type Activation = (typeof ACTIVATIONS)[number];
export type OptimizerName = (typeof OPTIMIZERS)[number];
export type Task = (typeof TASKS)[number];
export type MetricName = (typeof METRICS)[number];
export type ScheduleKind = (typeof SCHEDULES)[number];

/** Metrics for which a lower value is better. */
export const LOWER_IS_BETTER: ReadonlySet<MetricName> = new Set(['logLoss', 'rmse', 'mae', 'validationLoss']);
