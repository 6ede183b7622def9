import { z } from 'zod';
import { samplerSchema } from '../samplers/registry.js';
import { budgetSchema } from '../core/budget.js';
import { LOWER_IS_BETTER, METRICS, TASKS, type Goal, type MetricName } from '../core/configuration.js';
import { SECOND_GOALS } from '../core/front.js';
import { earlyStoppingSchema, seedField as seed } from '../core/fields.js';
import { listedConfigurationSchema, spaceSchema } from '../space/schema.js';
import { repeatsSchema } from '../core/repeats.js';

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
  costs: z
    .strictObject({
      unit: z.string().min(1).max(20).optional().describe('What a cost is counted in (EUR, hours, ...), shown beside every cost; default "cost units".'),
      cells: z
        .array(
          z.strictObject({
            actual: z.string().min(1).describe('The class the row truly is (a label of the target column).'),
            predicted: z.string().min(1).describe('The class the model predicts for it.'),
            cost: z.number().finite().describe('What one such row costs; a gain is a negative cost.'),
          }),
        )
        .min(1)
        .describe('Cells of the confusion matrix with their cost per row; a cell not listed costs 0. Each (actual, predicted) pair at most once.'),
    })
    .optional()
    .describe(
      'Classification only: what each kind of decision costs per row. Present: every epoch also reports the metric "cost" (mean cost per validation row: binary at the threshold of least cost, multiclass by choosing for each row the class of least expected cost), the default goal becomes "cost", and a binary export\'s default threshold rule is "least-cost".',
    ),
});

/** The unit costs are shown in when `data.costs.unit` is not given. */
export const DEFAULT_COST_UNIT = 'cost units';

export type CostSettings = NonNullable<z.output<typeof dataSchema>['costs']>;

export const goalSchema = z.strictObject({
  metric: z.enum(METRICS).describe('Validation metric to rank trials by.'),
  better: z.enum(['higher', 'lower']).optional().describe('Whether a higher or a lower value of the metric is better; default follows the metric.'),
});

const thresholdShare = z.number().gt(0).max(1).describe('A share between 0 (exclusive) and 1.');

export const decisionThresholdSchema = z
  .discriminatedUnion('choose', [
    z.strictObject({ choose: z.literal('largest-f1').describe('The threshold with the largest F1 of the positive class.') }),
    z.strictObject({ choose: z.literal('least-cost').describe('The threshold with the least mean cost per row under data.costs (which it needs).') }),
    z.strictObject({ choose: z.literal('min-precision').describe('The threshold with the largest recall among those reaching this precision.'), value: thresholdShare }),
    z.strictObject({ choose: z.literal('min-recall').describe('The threshold with the largest precision among those reaching this recall.'), value: thresholdShare }),
  ])
  .describe('Binary only: how the exported model\'s decision threshold is chosen on the validation rows; absent means 0.5, or least-cost when data.costs is given.');

export type DecisionThresholdRule = z.output<typeof decisionThresholdSchema>;


export const footprintSchema = z
  .strictObject({
    maxWeights: z
      .int()
      .min(1)
      .optional()
      .describe('Largest network allowed, in trainable weights and biases (known from depth, width and the data before training). A drawn configuration over it is never trained: its width is cut to the widest that fits at its depth, then its depth if need be.'),
    maxRowMicroseconds: z
      .number()
      .positive()
      .optional()
      .describe('Slowest network allowed, in microseconds per row of the forward pass, measured after a trial\'s first job on this machine. A trial over it is flagged too-slow: ranked after every trial within it, never on the front, never told to the sampler as bad (the measurement is not deterministic).'),
    against: z
      .enum(SECOND_GOALS)
      .optional()
      .describe('A second goal to weigh the score against: weights or time (per row). The ranking then also lists the front (the configurations no other beats on both), the report draws it, export --front picks from it, and tpe and tpe-hyperband search for both goals.'),
  })
  .describe('What the network may cost where it runs: a size limit, a speed limit and a second goal. Absent: no limit, one goal.');

export type FootprintSettings = z.output<typeof footprintSchema>;

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
  goal: goalSchema.optional().describe('Default: cost when data.costs is given, else auc for binary, accuracy for multiclass, rmse for regression.'),
  threads: z.int().min(1).max(256).optional().describe('Threads of this machine training jobs at once; default: available cores. (A worker is a `rungwise worker` process on any machine.)'),
  trialTimeoutSeconds: z.number().positive().optional().describe('A trial running longer is stopped and marked timed-out.'),
  retries: z.int().min(0).max(10).default(0).describe('Times a failed trial is run again before it is given up.'),
  keptNetworks: z.int().min(1).max(1000).optional().describe('How many of the best trials keep their network (checkpoint) when the study ends, for export and export --ensemble; default 3.'),
  decisionThreshold: decisionThresholdSchema.optional(),
  earlyStopping: earlyStoppingSchema.optional(),
  tryFirst: z
    .array(listedConfigurationSchema)
    .min(1)
    .optional()
    .describe('Configurations to train first, in order: trial 0 trains the first, trial 1 the second, ...; every sampler gives them their trials as listed, and model-based samplers learn from their results. Values may lie outside the space.'),
  footprint: footprintSchema.optional(),
  repeats: repeatsSchema,
});

/**
 * A study from its data alone: the CSV and the target (optionally the task, the split seed, a name and a
 * budget); rungwise infers the task and fills in the search space, budget, sampler and a first
 * configuration (`commands/default-study.ts`).
 */
export const dataOnlyStudySchema = z.strictObject({
  $schema: z.string().optional(),
  name: studySchema.shape.name.optional().describe('Study name; default: the CSV\'s file name.'),
  data: z.strictObject({
    csv: dataSchema.shape.csv,
    target: dataSchema.shape.target,
    task: dataSchema.shape.task.optional().describe('binary, multiclass or regression; default: inferred from the target column.'),
    splitSeed: seed.optional().describe('Seed of the train/validation/test split.'),
  }),
  budget: budgetSchema.optional().describe('Replaces the default budget (trials and maxEpochs); the first rung trains maxEpochs / 27 epochs, at least 1.'),
});

/** A data-only definition as written. */
export type DataOnlyStudy = z.output<typeof dataOnlyStudySchema>;

/** A definition that gives `data` but no `space`: one for rungwise to complete. */
export function isDataOnly(raw: unknown): boolean {
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw) || !('data' in raw) || 'space' in raw) return false;
  // A key only a full definition has (a sampler, a goal, ...) means a full definition that lacks its space: say so.
  return Object.keys(raw).every((key) => DATA_ONLY_KEYS.has(key));
}

/** The keys a data-only definition may have. */
const DATA_ONLY_KEYS: ReadonlySet<string> = new Set(Object.keys(dataOnlyStudySchema.shape));

/** A study definition as written in the file (defaults not yet applied). */
export type StudyDefinitionInput = z.input<typeof studySchema>;
/** A validated study definition with defaults applied. */
export type StudyDefinition = z.output<typeof studySchema>;
export type SamplerSettings = StudyDefinition['sampler'];
export type SamplerKind = SamplerSettings['kind'];
export type DataSettings = StudyDefinition['data'];

/** The goal in force: the study's own, else `cost` when the study gives costs, else the task's default; which way is better follows the metric unless given. */
export function resolveGoal(definition: Pick<StudyDefinition, 'goal' | 'data'>): Goal {
  const metric: MetricName =
    definition.goal?.metric ??
    (definition.data.costs !== undefined ? 'cost' : definition.data.task === 'binary' ? 'auc' : definition.data.task === 'multiclass' ? 'accuracy' : 'rmse');
  const better = definition.goal?.better ?? (LOWER_IS_BETTER.has(metric) ? 'lower' : 'higher');
  return { metric, better };
}


/** The decision-threshold rule in force for a binary study: the study's own, else `least-cost` when it gives costs, else none (0.5). */
export function resolveThresholdRule(definition: Pick<StudyDefinition, 'decisionThreshold' | 'data'>): DecisionThresholdRule | undefined {
  if (definition.data.task !== 'binary') return undefined;
  return definition.decisionThreshold ?? (definition.data.costs !== undefined ? { choose: 'least-cost' } : undefined);
}
