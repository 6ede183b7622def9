/**
 * A network's size, known from its configuration and the data's shape before any training: the
 * weight limit (`footprint.maxWeights`) is applied with it before a configuration is proposed.
 */
import type { TrialConfiguration } from './configuration.js';

/**
 * Trainable parameters (weights and biases) of the network a configuration trains: `depth` dense
 * hidden layers of `width` units over `inputs` inputs, then a dense output layer of `outputs` units.
 * inputs x width + width, (depth - 1) x (width x width + width), width x outputs + outputs.
 */
export function weightCount(configuration: Pick<TrialConfiguration, 'depth' | 'width'>, inputs: number, outputs: number): number {
  const { depth, width } = configuration;
  return inputs * width + width + (depth - 1) * (width * width + width) + width * outputs + outputs;
}

/** The data's shape a network is sized by: model inputs after encoding, and outputs (1, or the classes of a multiclass task). */
export interface NetworkShape {
  inputs: number;
  outputs: number;
}

/** Integer ranges of depth and width a configuration may be narrowed within. */
export interface SizeRanges {
  depth: { min: number };
  width: { min: number };
}

/**
 * The configuration cut to fit `maxWeights`: unchanged when it fits; else its width is cut to the
 * widest that fits at its depth (never below `ranges.width.min`), and if none fits, its depth is cut
 * one layer at a time (never below `ranges.depth.min`). Undefined when even the smallest network of
 * the ranges is over the limit. Deterministic: the same configuration always gives the same answer.
 */
export function fitWeightLimit<T extends Pick<TrialConfiguration, 'depth' | 'width'>>(configuration: T, shape: NetworkShape, maxWeights: number, ranges: SizeRanges): T | undefined {
  if (weightCount(configuration, shape.inputs, shape.outputs) <= maxWeights) return configuration;
  for (let depth = configuration.depth; depth >= ranges.depth.min; depth--) {
    const width = widestFitting(depth, shape, maxWeights, ranges.width.min, configuration.width);
    if (width !== undefined) return { ...configuration, depth, width };
  }
  return undefined;
}

/** The largest width in [min, max] whose network of `depth` layers fits `maxWeights` (weight count grows with width), or undefined. */
function widestFitting(depth: number, shape: NetworkShape, maxWeights: number, min: number, max: number): number | undefined {
  const fits = (width: number): boolean => weightCount({ depth, width }, shape.inputs, shape.outputs) <= maxWeights;
  if (!fits(min)) return undefined;
  let low = min;
  let high = max;
  while (low < high) {
    const middle = Math.ceil((low + high) / 2);
    if (fits(middle)) low = middle;
    else high = middle - 1;
  }
  return low;
}
