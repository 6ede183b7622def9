/**
 * What both trainers read from a configuration's regularisers, so they apply the same factors.
 * Every regulariser is off when its field is absent (or 0), and then a step is what it was before.
 */
import type { TrialConfiguration } from '../../core/configuration.js';

/** The regulariser fields of a configuration. */
export type RegulariserSettings = Pick<TrialConfiguration, 'learningRate' | 'weightDecay' | 'maxGradientNorm'>;

/**
 * The decoupled weight decay of one step: lambda times the schedule's multiplier eta_t, here the
 * epoch's learning rate over the configuration's (Loshchilov and Hutter, "Decoupled Weight Decay
 * Regularization", ICLR 2019, Algorithm 2 line 12: theta <- theta - eta_t (alpha step + lambda theta)).
 * 0 when the configuration has no weight decay.
 */
export function weightDecayStep(settings: RegulariserSettings, learningRate: number): number {
  const lambda = settings.weightDecay ?? 0;
  return lambda > 0 ? lambda * (learningRate / settings.learningRate) : 0;
}

/** Whether a step must know every layer's gradient before it updates any (weight decay or clipping on). */
export function updatesAfterBackward(settings: RegulariserSettings): boolean {
  return (settings.weightDecay ?? 0) > 0 || (settings.maxGradientNorm ?? 0) > 0;
}
