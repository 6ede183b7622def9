/** The search space as the study file states it: ranges and choices for each part of a configuration. */
import { z } from 'zod';
import { ACTIVATIONS, BLOCKS, DEFAULT_ENCODING_SETTINGS, NUMERIC_ENCODINGS, NUMERIC_INPUTS, OPTIMIZERS, SCHEDULES, SHAPES } from '../core/configuration.js';
import { CLASS_WEIGHTINGS } from '../core/class-weighting.js';

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

/** A range's `log` key: optional, so a definition that leaves it out draws on the dimension's default scale (and reads back as written). */
function scaleKey(defaultScale: 'log' | 'linear') {
  return z
    .boolean()
    .optional()
    .describe(`true: draw uniformly on a log scale; false: uniformly on the range. Default for this dimension: ${defaultScale === 'log' ? 'true (log scale)' : 'false (uniform)'}.`);
}

/** With `log: true` the range must stay above 0. */
function logNeedsPositiveMin(range: { min: number; log?: boolean | undefined }, ctx: z.RefinementCtx): void {
  if (range.log === true && range.min <= 0) ctx.addIssue({ code: 'custom', path: ['min'], message: `found ${range.min}, expected above 0 with log: true` });
}

const positiveLogRange = z
  .strictObject({
    min: z.number().positive().describe('Smallest value, inclusive.'),
    max: z.number().positive().describe('Largest value, inclusive.'),
    log: scaleKey('log'),
  })
  .superRefine(minNotAboveMax);

/** A decoupled weight decay range: per-step factors, above 0 and below 1. */
const decayRange = z
  .strictObject({
    min: z.number().positive().lt(1).describe('Smallest value, inclusive.'),
    max: z.number().positive().lt(1).describe('Largest value, inclusive.'),
    log: scaleKey('log'),
  })
  .superRefine(minNotAboveMax);

/** A label smoothing range: epsilon from 0 to 0.5. */
const smoothingRange = z
  .strictObject({
    min: z.number().min(0).max(0.5).describe('Smallest value, inclusive.'),
    max: z.number().min(0).max(0.5).describe('Largest value, inclusive.'),
    log: scaleKey('linear'),
  })
  .superRefine((range, ctx) => {
    minNotAboveMax(range, ctx);
    logNeedsPositiveMin(range, ctx);
  });

const fractionRange = z
  .strictObject({
    min: z.number().min(0).max(0.9),
    max: z.number().min(0).max(0.9),
    log: scaleKey('linear'),
  })
  .superRefine((range, ctx) => {
    minNotAboveMax(range, ctx);
    logNeedsPositiveMin(range, ctx);
  });

/**
 * Whether a real range is drawn on a log scale: its own `log` when given, else the dimension's
 * default (log for learningRate and l2, uniform for dropout). Study files written before `log` was
 * accepted on these ranges have no key and draw as they always did.
 */
export function drawsOnLogScale(range: { log?: boolean | undefined }, defaultLog: boolean): boolean {
  return range.log ?? defaultLog;
}

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



export const spaceSchema = z.strictObject({
  depth: integerRange.describe('Number of hidden layers.'),
  width: integerRange.describe('Units per hidden layer.'),
  activation: z.array(z.enum(ACTIVATIONS)).min(1).describe('Hidden-layer activations to choose from.'),
  learningRate: positiveLogRange.describe('Learning rate; drawn on a log scale unless log is false.'),
  batchSize: z.array(z.int().min(1)).min(1).default([32]).describe('Batch sizes to choose from.'),
  optimizer: z.array(z.enum(OPTIMIZERS)).min(1).default(['adam']).describe('Optimizers to choose from (momentum is SGD with momentum 0.9).'),
  l2: positiveLogRange.optional().describe('L2 weight penalty; drawn on a log scale unless log is false; absent means none.'),
  dropout: fractionRange.optional().describe('Dropout rate after each hidden layer; drawn uniformly unless log is true (then min must be above 0); absent means none.'),
  schedule: scheduleSchema.optional(),
  weightDecay: decayRange
    .optional()
    .describe('Decoupled weight decay (Loshchilov and Hutter 2019): each step shrinks every kernel by this factor times the schedule multiplier (learning rate now / configured); drawn on a log scale unless log is false; absent means none.'),
  maxGradientNorm: positiveLogRange
    .optional()
    .describe('Gradient-norm clipping (Pascanu et al. 2013): when the norm of all gradients together exceeds this, they are scaled down to it; drawn on a log scale unless log is false; absent means none.'),
  shape: z
    .array(z.enum(SHAPES))
    .min(1)
    .optional()
    .describe('Hidden-layer widths to choose from: constant (every layer width units) or funnel (layer i has ceil(width / 2^i) units, never fewer than min(width, 8)); absent means constant.'),
  block: z
    .array(z.enum(BLOCKS))
    .min(1)
    .optional()
    .describe('How hidden layers are stacked: plain (dense, activation, dropout) or residual (depth blocks of layer normalisation, dense, activation, dropout, dense, dropout, added to the block input; Gorishniy et al. 2021); absent means plain.'),
  numericInputs: z
    .array(z.enum(NUMERIC_INPUTS))
    .min(1)
    .max(NUMERIC_INPUTS.length)
    .refine((list) => new Set(list).size === list.length, 'each choice at most once')
    .optional()
    .describe(
      'How numeric columns become inputs, to choose from: standardise (training mean and standard deviation), robust-clip (median and interquartile range, then a smooth clip into (-3, 3)), normal-quantiles (training quantiles mapped onto the standard normal). Absent means standardise.',
    ),
  poolCategoriesBelow: z
    .array(z.int().min(0).max(100_000))
    .min(1)
    .max(4)
    .refine((list) => new Set(list).size === list.length, 'each value at most once')
    .optional()
    .describe('Categories seen in fewer training rows than this share one input, to choose from (0: every category its own input). Absent means 0.'),
  labelSmoothing: smoothingRange
    .optional()
    .describe('Label smoothing epsilon, classification only (Szegedy et al. 2016): training targets (1 - epsilon) x one-hot + epsilon / classes; drawn uniformly unless log is true; absent means none.'),
  classWeights: z
    .array(z.enum(CLASS_WEIGHTINGS))
    .min(1)
    .optional()
    .describe(
      'Classification only: class weightings of the training loss to choose from, so the goal picks one: "none" (every row the same), "balanced" (n / (classes x rows of the class)), "effective" (1 / effective number of samples, (1 - beta) / (1 - beta^rows of the class): Cui et al. 2019), each from the training rows and scaled to a mean row weight of 1. Absent: data.classWeights for every trial. Not together with data.classWeights.',
    ),
  effectiveBeta: z
    .number()
    .gt(0)
    .lt(1)
    .optional()
    .describe('The beta of the "effective" class weighting, in (0, 1): near 1 it approaches "balanced", smaller values soften it; default 0.999.'),
  numericEncoding: z
    .array(z.enum(NUMERIC_ENCODINGS))
    .min(1)
    .max(NUMERIC_ENCODINGS.length)
    .refine((list) => new Set(list).size === list.length, 'each choice at most once')
    .optional()
    .describe(
      'How each numeric input (after numericInputs) is expanded, to choose from: none (one input), piecewise-linear (one input per training-quantile bin, Gorishniy et al. 2022), periodic (sines and cosines at fixed random frequencies, after Gorishniy et al. 2022). Absent means none.',
    ),
  encodingBins: z
    .int()
    .min(1)
    .max(256)
    .optional()
    .describe(`Piecewise-linear encoding: the most bins per numeric input (fewer distinct training values give fewer); default ${DEFAULT_ENCODING_SETTINGS.bins}.`),
  periodicFrequencies: z
    .int()
    .min(1)
    .max(128)
    .optional()
    .describe(`Periodic encoding: frequencies per numeric input, each giving a sine and a cosine input; default ${DEFAULT_ENCODING_SETTINGS.frequencies}.`),
  periodicScale: z
    .number()
    .positive()
    .max(1000)
    .optional()
    .describe(`Periodic encoding: the standard deviation of the normal distribution the fixed frequencies are drawn from (the input is scaled first); default ${DEFAULT_ENCODING_SETTINGS.scale}.`),
});

/** A validated search space with defaults applied. */
export type SearchSpace = z.output<typeof spaceSchema>;

/** One configuration as a study lists it to try first: every field of a trial's configuration (l2 and dropout default to 0). */
export const listedConfigurationSchema = z.strictObject({
  depth: z.int().min(1),
  width: z.int().min(1),
  activation: z.enum(ACTIVATIONS),
  learningRate: z.number().positive(),
  batchSize: z.int().min(1),
  optimizer: z.enum(OPTIMIZERS).default('adam'),
  l2: z.number().min(0).default(0),
  dropout: z.number().min(0).max(0.9).default(0),
  schedule: z.enum(SCHEDULES).optional().describe('Required when the space has a schedule; then also warmupEpochs, gamma and stepEpochs (step among the kinds), minFactor (cosine among the kinds).'),
  warmupEpochs: z.int().min(0).optional(),
  gamma: z.number().gt(0).max(1).optional(),
  stepEpochs: z.int().min(1).optional(),
  minFactor: z.number().min(0).lt(1).optional(),
  weightDecay: z.number().positive().lt(1).optional().describe('Required when the space has weightDecay, refused otherwise.'),
  maxGradientNorm: z.number().positive().optional().describe('Required when the space has maxGradientNorm, refused otherwise.'),
  labelSmoothing: z.number().min(0).max(0.5).optional().describe('Required when the space has labelSmoothing, refused otherwise.'),
  shape: z.enum(SHAPES).optional().describe('Required when the space has a shape, left out otherwise.'),
  block: z.enum(BLOCKS).optional().describe('Required when the space has a block, left out otherwise.'),
  numericInputs: z.enum(NUMERIC_INPUTS).optional().describe('Required when the space has numericInputs, one of its choices.'),
  poolCategoriesBelow: z.int().min(0).optional().describe('Required when the space has poolCategoriesBelow, one of its values.'),
  classWeights: z.enum(CLASS_WEIGHTINGS).optional().describe('Required when the space has classWeights (one of its weightings); then effectiveBeta too when it is "effective".'),
  effectiveBeta: z.number().gt(0).lt(1).optional(),
  numericEncoding: z.enum(NUMERIC_ENCODINGS).optional().describe('Required when the space has numericEncoding, one of its choices.'),
});

/** A listed configuration's preprocessing fields against the space's: each given exactly when the space has it, and one of its choices. */
export function listedPreprocessingProblem(entry: z.output<typeof listedConfigurationSchema>, space: SearchSpace): string | undefined {
  for (const key of ['numericInputs', 'poolCategoriesBelow', 'numericEncoding'] as const) {
    const choices: readonly (string | number)[] | undefined = space[key];
    const value = entry[key];
    if (choices === undefined && value !== undefined) return `gives ${key} but the space has no ${key}; leave it out`;
    if (choices !== undefined && value === undefined) return `lacks ${key}, which the space draws; give one of ${choices.join(', ')}`;
    if (choices !== undefined && !choices.includes(value!)) return `gives ${key} ${String(value)}, which is not among the space's ${choices.join(', ')}`;
  }
  return undefined;
}

/** The fields a listed configuration must give for this space's schedule and shape, and those it must leave out. */
export function listedScheduleProblem(entry: z.output<typeof listedConfigurationSchema>, space: SearchSpace): string | undefined {
  const shape = listedShapeProblem(entry, space);
  if (shape) return shape;
  const schedule = space.schedule;
  const given = (['schedule', 'warmupEpochs', 'gamma', 'stepEpochs', 'minFactor'] as const).filter((key) => entry[key] !== undefined);
  if (!schedule) return given.length > 0 ? `gives ${given.join(', ')} but the space has no schedule; leave them out` : undefined;
  const needed: string[] = ['schedule', 'warmupEpochs'];
  if (schedule.kind.includes('step')) needed.push('gamma', 'stepEpochs');
  if (schedule.kind.includes('cosine')) needed.push('minFactor');
  const missing = needed.filter((key) => !given.includes(key as (typeof given)[number]));
  if (missing.length > 0) return `lacks ${missing.join(', ')}, which this space's schedule draws; give them`;
  const extra = given.filter((key) => !needed.includes(key));
  return extra.length > 0 ? `gives ${extra.join(', ')}, which this space's schedule kinds do not use; leave them out` : undefined;
}

/** A listed configuration gives `shape` and `block` exactly when the space has them. */
function listedShapeProblem(entry: z.output<typeof listedConfigurationSchema>, space: SearchSpace): string | undefined {
  for (const key of ['shape', 'block'] as const) {
    const drawn = space[key];
    if (!drawn && entry[key] !== undefined) return `gives ${key} but the space has no ${key}; leave it out`;
    if (drawn && entry[key] === undefined) return `lacks ${key}, which this space draws (${drawn.join(', ')}); give it`;
  }
  return undefined;
}

/** The class-weighting fields a listed configuration must give for this space, and those it must leave out. */
export function listedClassWeightProblem(entry: z.output<typeof listedConfigurationSchema>, space: SearchSpace): string | undefined {
  if (!space.classWeights) {
    const given = (['classWeights', 'effectiveBeta'] as const).filter((key) => entry[key] !== undefined);
    return given.length > 0 ? `gives ${given.join(', ')} but the space has no classWeights; leave them out` : undefined;
  }
  if (entry.classWeights === undefined) return `lacks classWeights, which this space draws; give one of ${space.classWeights.join(', ')}`;
  if (entry.classWeights === 'effective' && entry.effectiveBeta === undefined) return 'lacks effectiveBeta, which the "effective" weighting needs';
  if (entry.classWeights !== 'effective' && entry.effectiveBeta !== undefined) return `gives effectiveBeta, which the "${entry.classWeights}" weighting does not use; leave it out`;
  return undefined;
}
