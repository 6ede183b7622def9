import { z } from 'zod';
import { samplerSchema } from '../samplers/registry.js';

export { samplerSchema };
import { seedField as seed } from './fields.js';

export { ACTIVATIONS, BINARY_METRICS, CLASSIFICATION_METRICS, LOWER_IS_BETTER, METRICS, OPTIMIZERS, REGRESSION_METRICS, SCHEDULES, TASKS } from './vocabulary.js';
export type { Activation, MetricName, OptimizerName, ScheduleKind, Task } from './vocabulary.js';
import { ACTIVATIONS, BINARY_METRICS, CLASSIFICATION_METRICS, LOWER_IS_BETTER, METRICS, OPTIMIZERS, REGRESSION_METRICS, SCHEDULES, TASKS, type Activation, type MetricName, type OptimizerName, type ScheduleKind, type Task } from './vocabulary.js';

/** A range whose min exceeds its max names both values. */
function minNotAboveMax(range: { min: number; max: number }, ctx: z.RefinementCtx): void {
  if (range.min > range.max) {
    ctx.addIssue({ code: 'custom', path: ['min'], message: `found ${range.min}, expected at most max (${range.max})` });
  }
}

const integerRange = z
  .strictObject({
    min: z.int().min(1).describe('Smallest value, inclusive.'),
    max: z.int().min(1).describe('Largest value, inclusive.'),
    log: z.boolean().default(false).describe('Draw uniformly on a log scale.'),
  })
  .superRefine(minNotAboveMax);

const positiveLogRange = z
  .strictObject({
    min: z.number().positive().describe('Smallest value, inclusive.'),
    max: z.number().positive().describe('Largest value, inclusive.'),
  })
  .superRefine(minNotAboveMax);

const fractionRange = z
  .strictObject({
    min: z.number().min(0).max(0.9),
    max: z.number().min(0).max(0.9),
  })
  .superRefine(minNotAboveMax);

/** A schedule setting: one fixed value, or a range searched like any hyperparameter (uniform, or on a log scale when `log`). */
function setting(value: z.ZodNumber, what: string) {
  return z.union([
    value.describe(`${what} (fixed).`),
    z
      .strictObject({ min: value.describe('Smallest value, inclusive.'), max: value.describe('Largest value, inclusive.'), log: z.boolean().default(false).describe('Draw uniformly on a log scale.') })
      .superRefine((range, ctx) => {
        minNotAboveMax(range, ctx);
        if (range.log && range.min <= 0) ctx.addIssue({ code: 'custom', path: ['min'], message: `found ${range.min}, expected above 0 with log: true` });
      })
      .describe(`${what}, searched over a range.`),
  ]);
}

export const scheduleSchema = z
  .strictObject({
    kind: z.array(z.enum(SCHEDULES)).min(1).describe('Schedules to choose from: constant, step (eta0 x gamma^floor(t / stepEpochs)), cosine (SGDR, Loshchilov and Hutter 2017, without restarts, over budget.maxEpochs).'),
    gamma: setting(z.number().gt(0).max(1), 'step: factor applied every stepEpochs epochs, in (0, 1]').default(0.1),
    stepEpochs: setting(z.int().min(1), 'step: epochs between two decays').default(10),
    warmupEpochs: setting(z.int().min(0), 'epochs of linear warm-up before the schedule (0: none)').default(0),
    minFactor: setting(z.number().min(0).lt(1), 'cosine: the final learning rate as a fraction of the initial one, in [0, 1)').default(0),
  })
  .describe('Learning-rate schedule applied per epoch; absent means constant (the learning rate of the configuration throughout).');

export const dataSchema = z.strictObject({
  csv: z.string().min(1).describe('Path of the CSV file, relative to the study definition file.'),
  target: z.string().min(1).describe('Name of the column to predict.'),
  task: z.enum(TASKS).describe('binary, multiclass or regression.'),
  features: z
    .array(z.string().min(1))
    .min(1)
    .optional()
    .describe('Columns to use as inputs; default: every column but the target and those in exclude. A listed column is used even past maxDistinctShare (with a warning). Not together with exclude.'),
  exclude: z
    .array(z.string().min(1))
    .min(1)
    .optional()
    .describe('Columns never used as inputs (identifiers, dates, free text); each must be in the CSV and not be the target. Not together with features.'),
  maxDistinctShare: z
    .number()
    .gt(0)
    .max(1)
    .optional()
    .describe('A text (categorical) feature with more distinct values than this share of the rows is refused unless features lists it; default 0.5.'),
  validationFraction: z.number().gt(0).lt(1).default(0.2).describe('Share of rows used to score trials.'),
  testFraction: z.number().min(0).lt(1).default(0.15).describe('Share of rows held back untouched for the final check.'),
  splitSeed: seed.default(0).describe('Seed of the train/validation/test split.'),
  folds: z
    .int()
    .min(2)
    .max(20)
    .optional()
    .describe(
      'k-fold cross-validation (2 to 20): the training and validation rows are cut into k folds (stratified for classification, drawn from the sampler seed), each trial trains k times, once per fold on the other folds, and its score is the mean over folds with its standard error. Costs k times the training. The test split stays held out. Absent: one validation split.',
    ),
  classWeights: z
    .union([
      z.enum(['none', 'balanced']),
      z.record(z.string().min(1), z.number().positive().describe('Weight of this class in the training loss (greater than 0).')),
    ])
    .optional()
    .describe(
      'Classification only: how much each class weighs in the training loss. "none" (default): every row the same; "balanced": n / (classes x rows of the class), from the training rows; or an object of class label to weight (classes it does not name weigh 1). Weights are scaled so the training rows\' mean weight is 1.',
    ),
});

export const spaceSchema = z.strictObject({
  depth: integerRange.describe('Number of hidden layers.'),
  width: integerRange.describe('Units per hidden layer.'),
  activation: z.array(z.enum(ACTIVATIONS)).min(1).describe('Hidden-layer activations to choose from.'),
  learningRate: positiveLogRange.describe('Learning rate, drawn on a log scale.'),
  batchSize: z.array(z.int().min(1)).min(1).default([32]).describe('Batch sizes to choose from.'),
  optimizer: z.array(z.enum(OPTIMIZERS)).min(1).default(['adam']).describe('Optimizers to choose from (momentum is SGD with momentum 0.9).'),
  l2: positiveLogRange.optional().describe('L2 weight penalty, drawn on a log scale; absent means none.'),
  dropout: fractionRange.optional().describe('Dropout rate after each hidden layer; absent means none.'),
  schedule: scheduleSchema.optional(),
});

export const budgetSchema = z.strictObject({
  trials: z.int().min(1).describe('Configurations to try (Hyperband derives its own count and ignores this).'),
  maxEpochs: z.int().min(1).describe('Epochs a configuration trains for at most (every trial, for random search).'),
});

export const goalSchema = z.strictObject({
  metric: z.enum(METRICS).describe('Validation metric to rank trials by.'),
  better: z.enum(['higher', 'lower']).optional().describe('Whether a higher or a lower value of the metric is better; default follows the metric.'),
});

const thresholdShare = z.number().gt(0).max(1).describe('A share between 0 (exclusive) and 1.');

export const decisionThresholdSchema = z
  .discriminatedUnion('choose', [
    z.strictObject({ choose: z.literal('largest-f1').describe('The threshold with the largest F1 of the positive class.') }),
    z.strictObject({ choose: z.literal('min-precision').describe('The threshold with the largest recall among those reaching this precision.'), value: thresholdShare }),
    z.strictObject({ choose: z.literal('min-recall').describe('The threshold with the largest precision among those reaching this recall.'), value: thresholdShare }),
  ])
  .describe('Binary only: how the exported model\'s decision threshold is chosen on the validation rows; absent means 0.5.');

export type DecisionThresholdRule = z.output<typeof decisionThresholdSchema>;

export const earlyStoppingSchema = z
  .discriminatedUnion('rule', [
    z.strictObject({
      rule: z.literal('patience').describe('Stop when the goal has not improved for `patience` epochs.'),
      patience: z.int().min(1).describe('Epochs without an improvement after which the trial stops.'),
      minDelta: z.number().min(0).default(0).describe('Smallest change of the goal that counts as an improvement (default 0: any).'),
    }),
    z.strictObject({
      rule: z.literal('generalisation-loss').describe('Prechelt (1998): stop after the first epoch with GL = 100 (E / E_opt - 1) > alpha, E the goal as an error.'),
      alpha: z.number().gt(0).describe('Generalisation loss in percent above which the trial stops.'),
    }),
  ])
  .describe('Stop a trial inside its job when the goal stops improving; the trial is scored, ranked and exported at its best epoch. Absent: every trial trains the epochs its sampler gives it.');

export type EarlyStoppingRule = z.output<typeof earlyStoppingSchema>;

export const studySchema = z.strictObject({
  $schema: z.string().optional(),
  name: z
    .string()
    .regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, 'letters, digits, dot, dash and underscore, starting with a letter or digit')
    .describe('Study name; also the default run directory runs/<name>.'),
  data: dataSchema,
  space: spaceSchema,
  budget: budgetSchema,
  sampler: samplerSchema.default({ kind: 'random', seed: 0 }),
  goal: goalSchema.optional().describe('Default: auc for binary, accuracy for multiclass, rmse for regression.'),
  workers: z.int().min(1).max(256).optional().describe('Worker threads; default: available cores.'),
  trialTimeoutSeconds: z.number().positive().optional().describe('A trial running longer is stopped and marked timed-out.'),
  retries: z.int().min(0).max(10).default(0).describe('Times a failed trial is run again before it is given up.'),
  decisionThreshold: decisionThresholdSchema.optional(),
  earlyStopping: earlyStoppingSchema.optional(),
});

/** A study definition as written in the file (defaults not yet applied). */
export type StudyDefinitionInput = z.input<typeof studySchema>;
/** A validated study definition with defaults applied. */
export type StudyDefinition = z.output<typeof studySchema>;
export type SamplerSettings = StudyDefinition['sampler'];
export type SamplerKind = SamplerSettings['kind'];
export type SearchSpace = z.output<typeof spaceSchema>;
export type Budget = z.output<typeof budgetSchema>;
export type DataSettings = StudyDefinition['data'];

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
  /** Present only when the space has a `schedule` (src/train/schedule.ts); absent: constant. */
  schedule?: ScheduleKind;
  /** Warm-up epochs (present with `schedule`). */
  warmupEpochs?: number;
  /** step only (present when the space's schedule kinds include step). */
  gamma?: number;
  stepEpochs?: number;
  /** cosine only (present when the space's schedule kinds include cosine). */
  minFactor?: number;
}

/** What the study ranks trials by: a validation metric and which way is better. */
export interface Goal {
  metric: MetricName;
  better: 'higher' | 'lower';
}


/** The goal in force: the study's own, else the task's default; which way is better follows the metric unless given. */
export function resolveGoal(definition: Pick<StudyDefinition, 'goal' | 'data'>): Goal {
  const metric: MetricName =
    definition.goal?.metric ??
    (definition.data.task === 'binary' ? 'auc' : definition.data.task === 'multiclass' ? 'accuracy' : 'rmse');
  const better = definition.goal?.better ?? (LOWER_IS_BETTER.has(metric) ? 'lower' : 'higher');
  return { metric, better };
}

/** Metrics each task reports every epoch (besides training and validation loss). */
export function metricsForTask(task: Task): readonly MetricName[] {
  if (task === 'binary') return ['accuracy', 'macroF1', 'auc', 'logLoss'];
  if (task === 'multiclass') return ['accuracy', 'macroF1', 'logLoss'];
  return ['rmse', 'mae', 'r2'];
}
