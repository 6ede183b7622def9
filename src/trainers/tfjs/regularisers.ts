/**
 * The reference step with decoupled weight decay and gradient-norm clipping, in tfjs operations
 * (the engine's assembly/regularisers.ts is checked against it): the gradients of the whole
 * objective (L2 term included), clipped together, each kernel decayed, then the optimizer's own
 * step from the decayed weights.
 */
import * as tf from '@tensorflow/tfjs';
import type { TrialConfiguration } from '../../core/configuration.js';
import { weightDecayStep } from '../shared/regularisers.js';
import type { Network } from './network.js';

/** The learning rate the optimizer steps at now (tfjs keeps it as a field its typings hide). */
function currentLearningRate(optimizer: tf.Optimizer): number {
  return (optimizer as unknown as { learningRate: number }).learningRate;
}

/**
 * Scales the gradients down to norm `limit` when their norm is above it (Pascanu, Mikolov, Bengio,
 * "On the difficulty of training recurrent neural networks", ICML 2013, Algorithm 1).
 */
export function clipByNorm(gradients: tf.NamedTensorMap, limit: number): tf.NamedTensorMap {
  const names = Object.keys(gradients);
  const norm = Math.sqrt(tf.tidy(() => tf.addN(names.map((name) => tf.sum(tf.square(gradients[name]!)))).dataSync()[0]!));
  if (!(norm > limit)) return gradients;
  const factor = tf.scalar(limit / norm);
  return Object.fromEntries(names.map((name) => [name, tf.mul(gradients[name]!, factor)]));
}

/** Labels with label smoothing's targets: keep x label + share (one-hot rows for multiclass, 0/1 for binary). */
export function smoothLabels(labels: tf.Tensor2D, targets: { keep: number; share: number }): tf.Tensor2D {
  return tf.add(tf.mul(labels, tf.scalar(targets.keep)), tf.scalar(targets.share));
}

/** One optimizer step on `objective` with the configuration's weight decay and clipping. */
export function regularisedStep(optimizer: tf.Optimizer, objective: () => tf.Scalar, network: Network, configuration: TrialConfiguration): void {
  const { grads } = optimizer.computeGradients(objective, network.variables);
  const limit = configuration.maxGradientNorm ?? 0;
  const gradients = limit > 0 ? clipByNorm(grads, limit) : grads;
  const factor = weightDecayStep(configuration, currentLearningRate(optimizer));
  if (factor > 0) {
    const step = tf.scalar(factor);
    for (const layer of [...network.hidden, network.output]) layer.kernel.assign(tf.sub(layer.kernel, tf.mul(step, layer.kernel)));
  }
  optimizer.applyGradients(gradients);
}
