/**
 * What both trainers read from a configuration's regularisers, so they apply the same factors.
 * Every regulariser is off when its field is absent (or 0), and then a step is what it was before.
 */
import type { Task, TrialConfiguration } from '../../core/configuration.js';

/** The regulariser fields of a configuration. */
export type RegulariserSettings = Pick<TrialConfiguration, 'learningRate' | 'weightDecay' | 'maxGradientNorm' | 'labelSmoothing'>;

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

/**
 * Label smoothing's targets (Szegedy et al., "Rethinking the Inception Architecture for Computer
 * Vision", CVPR 2016, section 7): the true class weighs `keep` = 1 - epsilon more than the others, and
 * every class gets `share` = epsilon / classes (a binary label counts two classes), as
 * tf.losses.softmaxCrossEntropy and sigmoidCrossEntropy smooth. Undefined when off or for regression.
 */
export function smoothedTargets(settings: RegulariserSettings, task: Task, outputCount: number): { keep: number; share: number } | undefined {
  const epsilon = settings.labelSmoothing ?? 0;
  if (!(epsilon > 0) || task === 'regression') return undefined;
  return { keep: 1 - epsilon, share: epsilon / (task === 'binary' ? 2 : outputCount) };
}

/** Whether a step must know every layer's gradient before it updates any (weight decay or clipping on). */
export function updatesAfterBackward(settings: RegulariserSettings): boolean {
  return (settings.weightDecay ?? 0) > 0 || (settings.maxGradientNorm ?? 0) > 0;
}
