/**
 * The size of a configuration's network, known from its configuration and the data's shape before any
 * training: the width of each hidden layer (its shape), its dense layers (plain or residual blocks) and
 * the number of weights it trains. One place, so that the trainers, the export, the cost estimates and
 * the weight limit (`footprint.maxWeights`, applied before a configuration is proposed) agree.
 */
import type { TrialConfiguration } from './configuration.js';

/** A funnel never narrows a layer below this many units (nor below the first layer's width when that is smaller). Ours. */
export const FUNNEL_FLOOR = 8;

/**
 * The hidden layers' widths, first layer first. `constant` (or no shape): every layer `width`.
 * `funnel`: layer i (from 0) has ceil(width / 2^i) units, never fewer than min(width, FUNNEL_FLOOR),
 * so width 64 over depth 4 gives 64, 32, 16, 8 and over depth 5 gives 64, 32, 16, 8, 8.
 */
export function hiddenWidths(configuration: Pick<TrialConfiguration, 'depth' | 'width' | 'shape'>): number[] {
  const { depth, width } = configuration;
  if (configuration.shape !== 'funnel') return Array.from({ length: depth }, () => width);
  const floor = Math.min(width, FUNNEL_FLOOR);
  return Array.from({ length: depth }, (_, i) => Math.max(floor, Math.ceil(width / 2 ** i)));
}

/**
 * The dense layers' fan-in and fan-out, input side first, output layer last. Plain: one layer per
 * hidden width. Residual (Gorishniy et al. 2021, section 3.2, from memory): a first layer from the inputs to
 * `width`, then per block two layers, `width` to the block's hidden width and back to `width`.
 */
export function denseShapes(configuration: Pick<TrialConfiguration, 'depth' | 'width' | 'shape' | 'block'>, inputs: number, outputs: number): { fanIn: number; fanOut: number }[] {
  const hidden = hiddenWidths(configuration);
  const widths = configuration.block === 'residual' ? [inputs, configuration.width, ...hidden.flatMap((inner) => [inner, configuration.width]), outputs] : [inputs, ...hidden, outputs];
  return widths.slice(1).map((fanOut, l) => ({ fanIn: widths[l]!, fanOut }));
}

/**
 * Trained values of the configuration's network for `inputs` inputs and `outputs` outputs: kernels
 * and biases, and with residual blocks each normalisation's gain and bias (one per block and one
 * before the output layer, `width` each).
 */
export function weightCount(configuration: Pick<TrialConfiguration, 'depth' | 'width' | 'shape' | 'block'>, inputs: number, outputs: number): number {
  const dense = denseShapes(configuration, inputs, outputs).reduce((sum, { fanIn, fanOut }) => sum + fanIn * fanOut + fanOut, 0);
  return configuration.block === 'residual' ? dense + 2 * configuration.width * (configuration.depth + 1) : dense;
}

/**
 * What one value of a layer normalisation costs per row of a training step, in dense multiply-adds
 * (mean, variance, scale and shift, forward and back). Measured on the engine: residual networks
 * train about 5 multiply-adds' time per normalised value slower than their dense layers alone
 * (docs/performance.md, "Pricing an epoch").
 */
export const NORMALISATION_WORK = 5;

/**
 * The work of one row of a training step, in dense multiply-adds: every dense layer's fan-in x
 * fan-out (the same count forward and, twice, backward, so the ratio between networks holds), and
 * with residual blocks each normalisation's `width` values at {@link NORMALISATION_WORK}. What the
 * time-left estimate prices an epoch by (an epoch's rows are the same for every configuration).
 */
export function rowWork(configuration: Pick<TrialConfiguration, 'depth' | 'width' | 'shape' | 'block'>, inputs: number, outputs: number): number {
  const dense = denseShapes(configuration, inputs, outputs).reduce((sum, { fanIn, fanOut }) => sum + fanIn * fanOut, 0);
  return configuration.block === 'residual' ? dense + NORMALISATION_WORK * configuration.width * (configuration.depth + 1) : dense;
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
export function fitWeightLimit<T extends Pick<TrialConfiguration, 'depth' | 'width' | 'shape' | 'block'>>(configuration: T, shape: NetworkShape, maxWeights: number, ranges: SizeRanges): T | undefined {
  if (weightCount(configuration, shape.inputs, shape.outputs) <= maxWeights) return configuration;
  for (let depth = configuration.depth; depth >= ranges.depth.min; depth--) {
    const width = widestFitting({ ...configuration, depth }, shape, maxWeights, ranges.width.min, configuration.width);
    if (width !== undefined) return { ...configuration, depth, width };
  }
  return undefined;
}

/** The largest width in [min, max] whose network (the configuration's depth, shape and block) fits `maxWeights` (weight count grows with width), or undefined. */
function widestFitting(configuration: Pick<TrialConfiguration, 'depth' | 'shape' | 'block'>, shape: NetworkShape, maxWeights: number, min: number, max: number): number | undefined {
  const fits = (width: number): boolean => weightCount({ ...configuration, width }, shape.inputs, shape.outputs) <= maxWeights;
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
