/**
 * The size of a configuration's network: the width of each hidden layer (its shape), its dense layers
 * (plain or residual blocks) and the number of weights it trains. One place, so that the trainers, the export and the cost estimates agree.
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
