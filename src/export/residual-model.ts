/**
 * The exported network of a residual configuration as a tfjs functional Layers model: the first
 * dense layer, per block LayerNormalization, dense (with the activation), dense and Add, then
 * LayerNormalization, the activation and the output layer, with the trained weights in checkpoint
 * order (src/trainers/shared/layer-plan.ts). Dropout is for training only and is left out.
 */
import * as tf from '@tensorflow/tfjs';
import type { Activation, TrialConfiguration } from '../core/configuration.js';
import type { PreprocessingRecipe } from '../data/types.js';
import type { NamedWeights } from '../checkpoints/format.js';
import { layerPlan, NORM_EPSILON } from '../trainers/shared/layer-plan.js';
import { LEAKY_RELU_SLOPE } from '../trainers/tfjs/network.js';

/** Layers and the weights they take, in the order the checkpoint lists them. */
interface Pending {
  layer: tf.layers.Layer;
  weights: NamedWeights[];
}

/** The activation as a layer of its own (leakyRelu with the trainers' slope). */
function activationLayer(activation: Activation, name: string): tf.layers.Layer {
  if (activation === 'leakyRelu') return tf.layers.leakyReLU({ name, alpha: LEAKY_RELU_SLOPE });
  return tf.layers.activation({ name, activation });
}

function norm(name: string): tf.layers.Layer {
  return tf.layers.layerNormalization({ name, axis: -1, epsilon: NORM_EPSILON });
}

function dense(name: string, units: number, activation: 'sigmoid' | 'softmax' | 'linear' = 'linear'): tf.layers.Layer {
  // Initial weights are overwritten at once; zeros keeps construction free of unseeded draws.
  return tf.layers.dense({ name, units, activation, kernelInitializer: 'zeros' });
}

/**
 * The functional model of a residual configuration. `output` gives the output layer's units and
 * activation and its kernel and bias (already unscaled for regression).
 */
export function buildResidualModel(
  configuration: TrialConfiguration,
  recipe: PreprocessingRecipe,
  weights: readonly NamedWeights[],
  output: { units: number; activation: 'sigmoid' | 'softmax' | 'linear'; unscale: (kernel: NamedWeights, bias: NamedWeights) => [NamedWeights, NamedWeights] },
): tf.LayersModel {
  const plans = layerPlan(0, configuration, recipe.inputCount, output.units);
  const expected = plans.reduce((count, plan) => count + (plan.norm ? 4 : 2), 0);
  if (weights.length !== expected) throw new Error(`the checkpoint holds ${weights.length} weights, a residual network of ${configuration.depth} blocks has ${expected}`);
  let next = 0;
  const take = (count: number): NamedWeights[] => weights.slice(next, (next += count));
  const pending: Pending[] = [];
  const add = <T extends tf.SymbolicTensor | tf.SymbolicTensor[]>(layer: tf.layers.Layer, input: T, count: number): tf.SymbolicTensor => {
    if (count > 0) pending.push({ layer, weights: take(count) });
    return layer.apply(input) as tf.SymbolicTensor;
  };
  const input = tf.input({ shape: [recipe.inputCount], name: 'features' });
  let stream = add(dense('input_dense', configuration.width), input, 2);
  for (let b = 1; b < plans.length - 1; b += 2) {
    const block = (b + 1) / 2;
    const normalised = add(norm(`block_${block}_norm`), stream, 2);
    const inner = add(dense(`block_${block}_dense_1`, plans[b]!.fanOut), normalised, 2);
    const activated = add(activationLayer(configuration.activation, `block_${block}_activation`), inner, 0);
    const outer = add(dense(`block_${block}_dense_2`, configuration.width), activated, 2);
    stream = add(tf.layers.add({ name: `block_${block}_add` }), [stream, outer], 0);
  }
  const head = add(activationLayer(configuration.activation, 'head_activation'), add(norm('head_norm'), stream, 2), 0);
  const outputLayer = dense('output', output.units, output.activation);
  const [kernel, bias] = take(2) as [NamedWeights, NamedWeights];
  pending.push({ layer: outputLayer, weights: output.unscale(kernel, bias) });
  const model = tf.model({ inputs: input, outputs: outputLayer.apply(head) as tf.SymbolicTensor, name: 'rungwise_mlp' });
  for (const { layer, weights: values } of pending) {
    const tensors = values.map((w) => tf.tensor(w.values, w.shape));
    try {
      layer.setWeights(tensors);
    } finally {
      tf.dispose(tensors);
    }
  }
  return model;
}
