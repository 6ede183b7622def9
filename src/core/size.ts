/**
 * The size of a configuration's network: the width of each hidden layer (its shape) and the number
 * of weights it trains. One place, so that the trainers, the export and the cost estimates agree.
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

/** Trained values (kernels and biases) of the configuration's network for `inputs` inputs and `outputs` outputs. */
export function weightCount(configuration: Pick<TrialConfiguration, 'depth' | 'width' | 'shape'>, inputs: number, outputs: number): number {
  const widths = [inputs, ...hiddenWidths(configuration), outputs];
  let count = 0;
  for (let l = 0; l + 1 < widths.length; l++) count += widths[l]! * widths[l + 1]! + widths[l + 1]!;
  return count;
}
