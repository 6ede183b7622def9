import { drawsOnLogScale, type SearchSpace } from './schema.js';
import type { TrialConfiguration } from '../core/configuration.js';
import { stream, type Rng } from '../random/streams.js';
import { REGULARISERS, regulariserFields, spaceRegularisers } from './regularisers.js';
import { DEFAULT_EFFECTIVE_BETA, type ClassWeighting } from '../core/class-weighting.js';

/**
 * Draw one configuration from the search space.
 *
 * Every field consumes exactly one draw, always in the same order (depth, width, activation,
 * learningRate, batchSize, optimizer, l2, dropout), even when the field is fixed or absent. So
 * adding `l2` to a space, or giving a list a single entry, leaves every other field's draw unchanged.
 * The schedule's draws (with a schedule), the regularisers', shape, block, the preprocessing
 * choices', the class weighting's and the numeric encoding's come after them, each only when the space has it.
 */
export function sampleConfiguration(space: SearchSpace, rng: Rng): TrialConfiguration {
  const depth = drawInteger(space.depth, rng());
  const width = drawInteger(space.width, rng());
  const activation = choose(space.activation, rng());
  const learningRate = drawReal(space.learningRate, true, rng());
  const batchSize = choose(space.batchSize, rng());
  const optimizer = choose(space.optimizer, rng());
  const l2Draw = rng();
  const dropoutDraw = rng();
  const configuration: TrialConfiguration = {
    depth,
    width,
    activation,
    learningRate,
    batchSize,
    optimizer,
    l2: space.l2 ? drawReal(space.l2, true, l2Draw) : 0,
    dropout: space.dropout ? drawReal(space.dropout, false, dropoutDraw) : 0,
  };
  // Drawn after every other field, five draws always, so a space without a schedule draws as before.
  const scheduled: TrialConfiguration = space.schedule ? { ...configuration, ...scheduleAt(space.schedule, [rng(), rng(), rng(), rng(), rng()]) } : configuration;
  // Then the regularisers, one draw each when the space has any (regularisers.ts): a space without them draws as before.
  const ranges = new Map(spaceRegularisers(space).map(({ dimension, range }) => [dimension.name, { range, dimension }]));
  const regulariserDraws = ranges.size === 0 ? [] : REGULARISERS.map(() => rng());
  const drawn: TrialConfiguration = ranges.size === 0 ? scheduled : {
    ...scheduled,
    ...regulariserFields(space, (name) => {
      const { range, dimension } = ranges.get(name)!;
      return drawReal(range, dimension.defaultLog, regulariserDraws[REGULARISERS.indexOf(dimension)]!);
    }),
  };
  // One draw after everything else, only when the space has a shape, so a space without one draws as before.
  if (space.shape) drawn.shape = choose(space.shape, rng());
  // Likewise the block, last of all.
  if (space.block) drawn.block = choose(space.block, rng());
  if (space.numericInputs !== undefined || space.poolCategoriesBelow !== undefined) {
    // Two draws, always together, so a space without preprocessing choices draws as before.
    const numericDraw = rng();
    const poolDraw = rng();
    if (space.numericInputs) drawn.numericInputs = choose(space.numericInputs, numericDraw);
    if (space.poolCategoriesBelow) drawn.poolCategoriesBelow = choose(space.poolCategoriesBelow, poolDraw);
  }
  // One draw after every other, only when the space has class weightings: other spaces draw as before.
  if (space.classWeights) Object.assign(drawn, classWeightingAt(space, choose(space.classWeights, rng())));
  // Then the numeric encoding, one draw only when the space has it: other spaces draw as before.
  if (space.numericEncoding) drawn.numericEncoding = choose(space.numericEncoding, rng());
  return drawn;
}

/** The class-weighting fields of a configuration for the chosen weighting: `classWeights`, and `effectiveBeta` for `effective`. */
export function classWeightingAt(space: SearchSpace, weighting: ClassWeighting): Partial<TrialConfiguration> {
  return weighting === 'effective' ? { classWeights: weighting, effectiveBeta: space.effectiveBeta ?? DEFAULT_EFFECTIVE_BETA } : { classWeights: weighting };
}

/** A schedule setting as the space gives it: one value, or a range. */
export type ScheduleSetting = number | { min: number; max: number; log: boolean };

/** A setting's value at unit coordinate `u`: the fixed value, or its place on the range (whole numbers for integer settings). */
export function settingAt(setting: ScheduleSetting, u: number, integer: boolean): number {
  if (typeof setting === 'number') return setting;
  if (integer) return drawInteger(setting, u);
  return setting.log ? logUniform(setting.min, setting.max, u) : uniform(setting.min, setting.max, u);
}

/**
 * The schedule fields of a configuration from five unit coordinates (kind, gamma, stepEpochs,
 * warmupEpochs, minFactor): `schedule` and `warmupEpochs` always, `gamma` and `stepEpochs` when the
 * kinds include step, `minFactor` when they include cosine.
 */
export function scheduleAt(schedule: NonNullable<SearchSpace['schedule']>, u: readonly [number, number, number, number, number]): Partial<TrialConfiguration> {
  const fields: Partial<TrialConfiguration> = { schedule: choose(schedule.kind, u[0]) };
  if (schedule.kind.includes('step')) {
    fields.gamma = settingAt(schedule.gamma, u[1], false);
    fields.stepEpochs = settingAt(schedule.stepEpochs, u[2], true);
  }
  fields.warmupEpochs = settingAt(schedule.warmupEpochs, u[3], true);
  if (schedule.kind.includes('cosine')) fields.minFactor = settingAt(schedule.minFactor, u[4], false);
  return fields;
}

/**
 * The configuration of trial `trialId`: depends only on the space, the study seed and the id,
 * never on the order in which trials run.
 */
export function configurationForTrial(space: SearchSpace, studySeed: number, trialId: number): TrialConfiguration {
  return sampleConfiguration(space, stream(studySeed, 'params', trialId));
}

/** An integer in [min, max]: uniform, or log-uniform when `log` (each k weighted by ln((k+1)/k)). */
export function drawInteger(range: { min: number; max: number; log: boolean }, u: number): number {
  const value = range.log
    ? Math.floor(logUniform(range.min, range.max + 1, u))
    : range.min + Math.floor(u * (range.max - range.min + 1));
  // exp(log(x)) can land a hair outside the range; the clamp keeps the bounds inclusive and exact.
  return Math.min(range.max, Math.max(range.min, value));
}

/** A real range's value at unit coordinate `u`, on its own scale or the dimension's default (`defaultLog`). */
export function drawReal(range: { min: number; max: number; log?: boolean | undefined }, defaultLog: boolean, u: number): number {
  return drawsOnLogScale(range, defaultLog) ? logUniform(range.min, range.max, u) : uniform(range.min, range.max, u);
}

/** A real in [min, max] whose logarithm is uniform. */
export function logUniform(min: number, max: number, u: number): number {
  if (min === max) return min;
  const value = Math.exp(Math.log(min) + u * (Math.log(max) - Math.log(min)));
  return Math.min(max, Math.max(min, value));
}

/** A real in [min, max], uniform. */
export function uniform(min: number, max: number, u: number): number {
  return min + u * (max - min);
}

/** The entry of `options` whose share of [0, 1) holds `u`. */
export function choose<T>(options: readonly T[], u: number): T {
  // u < 1, so the index is always in range; the schema guarantees a non-empty list.
  return options[Math.min(options.length - 1, Math.floor(u * options.length))]!;
}
