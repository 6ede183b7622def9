/**
 * A search space as a list of dimensions, each mapped from one coordinate of the unit cube, so that
 * quasi-random designs and model-based samplers work on [0, 1]^d whatever the space holds.
 *
 * A numeric dimension's coordinate is its value's position on the range, on a log scale when `log`
 * (integers: k owns the cell of u that {@link drawInteger} maps to k). A categorical dimension's
 * coordinate falls in one of `choices.length` equal cells. The mapping from a coordinate to a value is
 * the same as random drawing's (`sample.ts`), so a uniform point gives a uniformly drawn configuration.
 */
import { drawsOnLogScale, type SearchSpace } from './schema.js';
import type { TrialConfiguration } from '../core/configuration.js';
import { regulariserFields, spaceRegularisers } from './regularisers.js';
import { choose, classWeightingAt, drawInteger, logUniform, uniform, type ScheduleSetting } from './sample.js';
import type { ClassWeighting } from '../core/class-weighting.js';

export interface NumericDimension {
  kind: 'numeric';
  name: string;
  min: number;
  max: number;
  /** Uniform on a log scale. */
  log: boolean;
  /** Whole numbers only (min and max included). */
  integer: boolean;
}

export interface CategoricalDimension {
  kind: 'categorical';
  name: string;
  choices: readonly (string | number)[];
}

export type Dimension = NumericDimension | CategoricalDimension;
export type DimensionValue = string | number;

/** The value of a dimension at unit coordinate `u` in [0, 1] (1 is taken as the top of the range). */
export function valueAt(dimension: Dimension, u: number): DimensionValue {
  const unit = Math.min(Math.max(u, 0), 1 - Number.EPSILON);
  if (dimension.kind === 'categorical') return choose(dimension.choices, unit);
  const { min, max, log, integer } = dimension;
  if (integer) return drawInteger({ min, max, log }, unit);
  return log ? logUniform(min, max, unit) : uniform(min, max, unit);
}

/**
 * The unit coordinate of a value: its position on the range, or the centre of its cell for integers
 * and categories (so that `valueAt(d, unitOf(d, v)) === v`).
 */
export function unitOf(dimension: Dimension, value: DimensionValue): number {
  if (dimension.kind === 'categorical') {
    const index = dimension.choices.indexOf(value);
    if (index < 0) throw new RangeError(`${dimension.name}: ${String(value)} is not one of ${dimension.choices.join(', ')}`);
    return (index + 0.5) / dimension.choices.length;
  }
  const { min, max, log, integer } = dimension;
  const x = Number(value);
  if (integer) {
    // Cell of k: [position(k), position(k + 1)) on the range [min, max + 1), linear or log.
    const position = (k: number) => (log ? Math.log(k / min) / Math.log((max + 1) / min) : (k - min) / (max + 1 - min));
    return (position(x) + position(x + 1)) / 2;
  }
  if (min === max) return 0.5;
  const unit = log ? Math.log(x / min) / Math.log(max / min) : (x - min) / (max - min);
  return Math.min(1, Math.max(0, unit));
}

/** Values of every dimension at a point of the unit cube, by dimension name. */
export function decode(dimensions: readonly Dimension[], point: readonly number[]): Record<string, DimensionValue> {
  if (point.length !== dimensions.length) throw new RangeError(`a point of ${point.length} coordinates for ${dimensions.length} dimensions`);
  return Object.fromEntries(dimensions.map((dimension, i) => [dimension.name, valueAt(dimension, point[i]!)]));
}

/** The point of the unit cube for values by dimension name (inverse of {@link decode} up to cells). */
export function encode(dimensions: readonly Dimension[], values: Readonly<Record<string, DimensionValue>>): number[] {
  return dimensions.map((dimension) => {
    const value = values[dimension.name];
    if (value === undefined) throw new RangeError(`no value for dimension ${dimension.name}`);
    return unitOf(dimension, value);
  });
}

/** The same point moved to the centre of its integer and categorical cells (what the point's configuration really is). */
export function snap(dimensions: readonly Dimension[], point: readonly number[]): number[] {
  return encode(dimensions, decode(dimensions, point));
}

/**
 * The dimensions of a rungwise search space, in the order random drawing uses (depth, width,
 * activation, learningRate, batchSize, optimizer, l2, dropout, then the schedule's settings, the
 * regularisers, shape, block, the preprocessing choices, class weights and the numeric encoding); absent
 * optional keys are not dimensions.
 */
export function spaceDimensions(space: SearchSpace): Dimension[] {
  const dimensions: Dimension[] = [
    { kind: 'numeric', name: 'depth', min: space.depth.min, max: space.depth.max, log: space.depth.log, integer: true },
    { kind: 'numeric', name: 'width', min: space.width.min, max: space.width.max, log: space.width.log, integer: true },
    { kind: 'categorical', name: 'activation', choices: space.activation },
    { kind: 'numeric', name: 'learningRate', min: space.learningRate.min, max: space.learningRate.max, log: drawsOnLogScale(space.learningRate, true), integer: false },
    { kind: 'categorical', name: 'batchSize', choices: space.batchSize },
    { kind: 'categorical', name: 'optimizer', choices: space.optimizer },
  ];
  if (space.l2) dimensions.push({ kind: 'numeric', name: 'l2', min: space.l2.min, max: space.l2.max, log: drawsOnLogScale(space.l2, true), integer: false });
  if (space.dropout) dimensions.push({ kind: 'numeric', name: 'dropout', min: space.dropout.min, max: space.dropout.max, log: drawsOnLogScale(space.dropout, false), integer: false });
  const schedule = space.schedule;
  if (schedule) {
    // The order and presence of scheduleAt (sample.ts); a fixed setting is a range of one value.
    const numeric = (name: string, setting: ScheduleSetting, integer: boolean): Dimension =>
      typeof setting === 'number'
        ? { kind: 'numeric', name, min: setting, max: setting, log: false, integer }
        : { kind: 'numeric', name, min: setting.min, max: setting.max, log: setting.log, integer };
    dimensions.push({ kind: 'categorical', name: 'schedule', choices: schedule.kind });
    if (schedule.kind.includes('step')) dimensions.push(numeric('gamma', schedule.gamma, false), numeric('stepEpochs', schedule.stepEpochs, true));
    dimensions.push(numeric('warmupEpochs', schedule.warmupEpochs, true));
    if (schedule.kind.includes('cosine')) dimensions.push(numeric('minFactor', schedule.minFactor, false));
  }
  for (const { dimension, range } of spaceRegularisers(space)) {
    dimensions.push({ kind: 'numeric', name: dimension.name, min: range.min, max: range.max, log: drawsOnLogScale(range, dimension.defaultLog), integer: false });
  }
  if (space.shape) dimensions.push({ kind: 'categorical', name: 'shape', choices: space.shape });
  if (space.block) dimensions.push({ kind: 'categorical', name: 'block', choices: space.block });
  if (space.numericInputs) dimensions.push({ kind: 'categorical', name: 'numericInputs', choices: space.numericInputs });
  if (space.poolCategoriesBelow) dimensions.push({ kind: 'categorical', name: 'poolCategoriesBelow', choices: space.poolCategoriesBelow });
  if (space.classWeights) dimensions.push({ kind: 'categorical', name: 'classWeights', choices: space.classWeights });
  if (space.numericEncoding) dimensions.push({ kind: 'categorical', name: 'numericEncoding', choices: space.numericEncoding });
  return dimensions;
}

/** The configuration at a point of the unit cube over {@link spaceDimensions}. */
export function configurationAt(space: SearchSpace, point: readonly number[]): TrialConfiguration {
  const values = decode(spaceDimensions(space), point);
  return {
    depth: values['depth'] as number,
    width: values['width'] as number,
    activation: values['activation'] as TrialConfiguration['activation'],
    learningRate: values['learningRate'] as number,
    batchSize: values['batchSize'] as number,
    optimizer: values['optimizer'] as TrialConfiguration['optimizer'],
    l2: space.l2 ? (values['l2'] as number) : 0,
    dropout: space.dropout ? (values['dropout'] as number) : 0,
    ...(space.schedule ? scheduleValues(values) : {}),
    ...regulariserFields(space, (name) => values[name] as number),
    ...(space.shape ? { shape: values['shape'] as TrialConfiguration['shape'] } : {}),
    ...(space.block ? { block: values['block'] as TrialConfiguration['block'] } : {}),
    ...(space.numericInputs ? { numericInputs: values['numericInputs'] as TrialConfiguration['numericInputs'] } : {}),
    ...(space.poolCategoriesBelow ? { poolCategoriesBelow: values['poolCategoriesBelow'] as number } : {}),
    ...(space.classWeights ? classWeightingAt(space, values['classWeights'] as ClassWeighting) : {}),
    ...(space.numericEncoding ? { numericEncoding: values['numericEncoding'] as TrialConfiguration['numericEncoding'] } : {}),
  };
}

function scheduleValues(values: Record<string, DimensionValue>): Partial<TrialConfiguration> {
  const fields: Partial<TrialConfiguration> = { schedule: values['schedule'] as TrialConfiguration['schedule'] };
  for (const name of ['gamma', 'stepEpochs', 'warmupEpochs', 'minFactor'] as const) if (values[name] !== undefined) fields[name] = values[name] as number;
  return fields;
}

/** The point of the unit cube of a configuration (cell centres for integers and categories). */
export function pointOfConfiguration(space: SearchSpace, configuration: TrialConfiguration): number[] {
  const values: Record<string, DimensionValue> = { ...configuration };
  return encode(spaceDimensions(space), values);
}
