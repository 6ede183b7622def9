/** Helpers for engine tests: tfjs twins of an engine trial, and reading engine buffers. */
import * as tf from '@tensorflow/tfjs';
import { EngineTrial } from '../../src/trainers/engine/trial.js';
import { networkWeights } from '../../src/trainers/engine/checkpoint-state.js';
import type { SharedDataset } from '../../src/core/job.js';
import type { TrialConfiguration } from '../../src/core/configuration.js';
import { createNetwork, networkSpec, type Network } from '../../src/trainers/tfjs/network.js';
import type { Rng } from '../../src/random/streams.js';

/** Labels as the tfjs path holds them: rows x 1, or one-hot rows x classes for multiclass. */
export function labelTensor(dataset: SharedDataset, y: Float32Array): tf.Tensor2D {
  if (dataset.task !== 'multiclass') return tf.tensor2d(y, [y.length, 1]);
  return tf.tidy(() => tf.oneHot(tf.tensor1d(Int32Array.from(y), 'int32'), dataset.outputCount).toFloat() as tf.Tensor2D);
}

/** The trial's kernel and bias gradients in checkpoint order (kernel, bias per layer), padding removed. */
export function engineGradients(trial: EngineTrial): Float32Array[] {
  return trial.layers.flatMap((layer) => [
    trial.readMatrix(layer.at.kernelGradient, layer.outStride, layer.fanIn, layer.fanOut),
    trial.readMatrix(layer.at.biasGradient, layer.outStride, 1, layer.fanOut),
  ]);
}

/** The gradients in the tfjs network's variable order: per layer its normalisation's gain and bias (when it reads one), kernel, bias. */
export function residualGradients(trial: EngineTrial): Float32Array[] {
  return trial.layers.flatMap((layer) => [
    ...(layer.plan.norm ? [trial.readMatrix(layer.at.normGainGradient, layer.inStride, 1, layer.fanIn), trial.readMatrix(layer.at.normBiasGradient, layer.inStride, 1, layer.fanIn)] : []),
    trial.readMatrix(layer.at.kernelGradient, layer.outStride, layer.fanIn, layer.fanOut),
    trial.readMatrix(layer.at.biasGradient, layer.outStride, 1, layer.fanOut),
  ]);
}

/**
 * An engine trial and a tfjs network with the same weights: the seeded initial kernels, and
 * biases drawn from `rng` (so that bias paths are exercised with non-zero values).
 */
export function twinNetworks(params: TrialConfiguration, dataset: SharedDataset, seed: number, rng: Rng): { trial: EngineTrial; network: Network } {
  const trial = EngineTrial.create({ trialId: 1, seed, configuration: params, dataset });
  for (const layer of trial.layers) {
    trial.writeMatrix(layer.at.bias, layer.outStride, Float32Array.from({ length: layer.fanOut }, () => rng() - 0.5), layer.fanOut);
  }
  const network = createNetwork(networkSpec(1, seed, params, dataset.inputCount, dataset.outputCount));
  networkWeights(trial).forEach((weights, i) => network.variables[i]!.assign(tf.tensor(weights.values, weights.shape)));
  return { trial, network };
}

/** max |a - b| / max |b|: the error relative to the reference's largest magnitude. */
export function relativeError(actual: ArrayLike<number>, reference: ArrayLike<number>): number {
  let difference = 0;
  let scale = 0;
  for (let i = 0; i < reference.length; i++) {
    difference = Math.max(difference, Math.abs(actual[i]! - reference[i]!));
    scale = Math.max(scale, Math.abs(reference[i]!));
  }
  return scale === 0 ? difference : difference / scale;
}
