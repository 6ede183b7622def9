/** How big a network is, counted the same way wherever size matters (the one-standard-error pick, size limits). */
import type { TrialConfiguration } from './configuration.js';

/**
 * Trainable weights (kernels and biases) of a configuration's network: `depth` dense hidden layers of
 * `width` units between `inputs` and `outputs`, each layer fan-in x fan-out plus one bias per unit.
 * Depth 0 is a linear model (inputs x outputs + outputs).
 * @example weightCount({ depth: 2, width: 8, ... }, 4, 3) // 4*8+8 + 8*8+8 + 8*3+3 = 139
 */
export function weightCount(configuration: Pick<TrialConfiguration, 'depth' | 'width'>, inputs: number, outputs: number): number {
  let total = 0;
  let fanIn = inputs;
  for (let layer = 0; layer < configuration.depth; layer++) {
    total += fanIn * configuration.width + configuration.width;
    fanIn = configuration.width;
  }
  return total + fanIn * outputs + outputs;
}
