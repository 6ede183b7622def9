import * as tf from '@tensorflow/tfjs';
import type { Activation, Block, Shape, Task, TrialConfiguration } from '../../core/configuration.js';
import { stream, type Rng } from '../../random/streams.js';
import { initialKernel, type InitRule } from '../shared/initial-weights.js';
import { layerPlan, NORM_EPSILON, type DenseLayerPlan } from '../shared/layer-plan.js';

export { initialKernel, initRuleFor, type InitRule } from '../shared/initial-weights.js';

/** The shape of a trial's network. */
export interface NetworkSpec {
  trialId: number;
  seed: number;
  inputCount: number;
  outputCount: number;
  depth: number;
  width: number;
  /** Hidden widths (src/core/size.ts; absent: constant). */
  shape?: Shape;
  /** Plain or residual blocks (absent: plain). */
  block?: Block;
  activation: Activation;
}

interface DenseLayer {
  kernel: tf.Variable;
  bias: tf.Variable;
  plan: DenseLayerPlan;
  /** The layer normalisation it reads (residual blocks). */
  norm?: { gain: tf.Variable; bias: tf.Variable };
}

/**
 * An MLP held as named variables; `variables` lists them in a fixed order (per dense layer: its
 * normalisation's gain and bias when it reads one, then kernel and bias).
 */
export interface Network {
  spec: NetworkSpec;
  hidden: DenseLayer[];
  output: DenseLayer;
  variables: tf.Variable[];
}

/** Slope of leakyRelu below zero (the tfjs layers default, fixed by the study definition). */
export const LEAKY_RELU_SLOPE = 0.2;

function denseLayer(plan: DenseLayerPlan, rule: InitRule, rng: Rng): DenseLayer {
  const { prefix, fanIn, fanOut } = plan;
  const kernel = tf.tidy(() =>
    tf.variable(tf.tensor2d(initialKernel(rule, fanIn, fanOut, rng), [fanIn, fanOut]), true, `${prefix}/kernel`),
  );
  const bias = tf.tidy(() => tf.variable(tf.zeros([fanOut]), true, `${prefix}/bias`));
  if (!plan.norm) return { kernel, bias, plan };
  // Gains start at one and biases at zero (Ba et al. 2016): the normalised input as it is.
  // Made in a tidy scope, as the kernel is, so the initial ones and zeros are released.
  const normPrefix = plan.norm.prefix;
  const norm = tf.tidy(() => ({ gain: tf.variable(tf.ones([fanIn]), true, `${normPrefix}/gain`), bias: tf.variable(tf.zeros([fanIn]), true, `${normPrefix}/bias`) }));
  return { kernel, bias, plan, norm };
}

/** Builds the network with seeded initial weights: dense layer i draws from `stream(seed, 'init', i)`. */
export function createNetwork(spec: NetworkSpec): Network {
  const plans = layerPlan(spec.trialId, spec, spec.inputCount, spec.outputCount);
  const layers = plans.map((plan, i) => denseLayer(plan, plan.rule, stream(spec.seed, 'init', i)));
  const variables = layers.flatMap((layer) => [...(layer.norm ? [layer.norm.gain, layer.norm.bias] : []), layer.kernel, layer.bias]);
  return { spec, hidden: layers.slice(0, -1), output: layers.at(-1)!, variables };
}

/**
 * Layer normalisation over each row's features: (x - mean) / sqrt(variance + epsilon) x gain + bias,
 * the variance without Bessel's correction. Source: Ba, Kiros, Hinton, "Layer Normalization", 2016, section 3 (from memory; checked against tf.layers.layerNormalization).
 */
export function layerNorm(x: tf.Tensor2D, gain: tf.Tensor, bias: tf.Tensor): tf.Tensor2D {
  return tf.tidy(() => {
    const { mean, variance } = tf.moments(x, -1, true);
    return tf.add(tf.mul(tf.mul(tf.sub(x, mean), tf.rsqrt(tf.add(variance, NORM_EPSILON))), gain), bias) as tf.Tensor2D;
  });
}

export function disposeNetwork(network: Network): void {
  for (const variable of network.variables) variable.dispose();
}

/** The hidden-layer activation as a tensor function. */
export function activate(activation: Activation, x: tf.Tensor): tf.Tensor {
  switch (activation) {
    case 'relu': return tf.relu(x);
    case 'leakyRelu': return tf.leakyRelu(x, LEAKY_RELU_SLOPE);
    case 'elu': return tf.elu(x);
    case 'selu': return tf.selu(x);
    case 'tanh': return tf.tanh(x);
    case 'sigmoid': return tf.sigmoid(x);
    case 'softplus': return tf.softplus(x);
    case 'swish': return tf.mul(x, tf.sigmoid(x));
    case 'relu6': return tf.relu6(x);
  }
}

/** Inverted-dropout masks for one batch: kept units are scaled by 1/(1-rate) so no rescaling is needed at inference. */
export interface DropoutPlan {
  rate: number;
  /** Draws the masks of this batch, layer after layer. */
  rng: Rng;
}

function dropoutMask(rows: number, units: number, plan: DropoutPlan): tf.Tensor2D {
  const keep = 1 / (1 - plan.rate);
  const values = new Float32Array(rows * units);
  for (let i = 0; i < values.length; i++) values[i] = plan.rng() >= plan.rate ? keep : 0;
  return tf.tensor2d(values, [rows, units]);
}

/**
 * `x · kernel + bias` with a hand-written gradient. The tfjs gradient of matMul multiplies with
 * `transposeA`/`transposeB` set, which the wasm backend runs on a slow generic path (3-4x slower
 * than a plain product at batch 256, measured in bench/); here the transposes are explicit so every
 * product runs as a plain one. The gradient is mathematically the same but sums in another order,
 * so figures differ in the last bits from a plain matMul's gradient (still identical run to run).
 */
const affine = tf.customGrad((...inputs) => {
  const [x, kernel, bias, save] = inputs as [tf.Tensor2D, tf.Tensor2D, tf.Tensor1D, tf.GradSaveFunc];
  save([x, kernel]);
  return {
    value: tf.add(tf.matMul(x, kernel), bias) as tf.Tensor2D,
    gradFunc: (dy: tf.Tensor2D, saved: tf.Tensor[]) => {
      const [savedX, savedKernel] = saved as [tf.Tensor2D, tf.Tensor2D];
      return [tf.matMul(dy, tf.transpose(savedKernel)), tf.matMul(tf.transpose(savedX), dy), tf.sum(dy, 0)];
    },
  };
}) as (x: tf.Tensor2D, kernel: tf.Tensor2D, bias: tf.Tensor1D) => tf.Tensor2D;

function dense(x: tf.Tensor2D, layer: DenseLayer): tf.Tensor2D {
  return affine(x, layer.kernel as tf.Tensor2D, layer.bias as tf.Tensor1D);
}

/** The residual network's logits: masks after each block's activation and after its second layer, in that order. */
function forwardResidual(network: Network, x: tf.Tensor2D, dropout?: DropoutPlan): tf.Tensor2D {
  const masked = (h: tf.Tensor2D): tf.Tensor2D => (dropout && dropout.rate > 0 ? tf.mul(h, dropoutMask(h.shape[0], h.shape[1], dropout)) : h);
  const [first, ...blocks] = network.hidden;
  let residual = dense(x, first!);
  for (let b = 0; b + 1 < blocks.length; b += 2) {
    const inner = blocks[b]!;
    const normalised = layerNorm(residual, inner.norm!.gain, inner.norm!.bias);
    const activated = masked(activate(network.spec.activation, dense(normalised, inner)) as tf.Tensor2D);
    residual = tf.add(residual, masked(dense(activated, blocks[b + 1]!)));
  }
  const head = network.output.norm!;
  return dense(activate(network.spec.activation, layerNorm(residual, head.gain, head.bias)) as tf.Tensor2D, network.output);
}

/** Logits (pre-output-function values), rows x outputCount. Pass `dropout` during training only. */
export function forward(network: Network, x: tf.Tensor2D, dropout?: DropoutPlan): tf.Tensor2D {
  return tf.tidy(() => {
    if (network.spec.block === 'residual') return forwardResidual(network, x, dropout);
    let h: tf.Tensor2D = x;
    for (const layer of network.hidden) {
      h = activate(network.spec.activation, dense(h, layer)) as tf.Tensor2D;
      if (dropout && dropout.rate > 0) h = tf.mul(h, dropoutMask(h.shape[0], h.shape[1], dropout));
    }
    return dense(h, network.output);
  });
}

/** The output function: sigmoid (binary), softmax over classes (multiclass), identity (regression). */
export function outputFromLogits(task: Task, logits: tf.Tensor2D): tf.Tensor2D {
  if (task === 'binary') return tf.sigmoid(logits);
  if (task === 'multiclass') return tf.softmax(logits);
  return tf.clone(logits);
}

/**
 * Mean loss over the rows, computed from logits for numerical stability: binary cross-entropy
 * (labels rows x 1 of 0/1), softmax cross-entropy (labels one-hot rows x classes), or mean squared error.
 * `rowWeights` (rows x 1, classification only) multiplies each row's loss before the mean over
 * the rows: the weighted sum divided by the row count (src/data/class-weights.ts normalises them).
 */
export function lossFromLogits(task: Task, logits: tf.Tensor2D, labels: tf.Tensor2D, rowWeights?: tf.Tensor2D): tf.Scalar {
  return tf.tidy((): tf.Scalar => {
    const weighted = (perRow: tf.Tensor): tf.Tensor => (rowWeights ? tf.mul(perRow, rowWeights) : perRow);
    if (task === 'binary') {
      // max(z, 0) - z*y + log(1 + exp(-|z|)): never exponentiates a large positive number.
      const z = logits;
      const perRow = tf.add(tf.sub(tf.relu(z), tf.mul(z, labels)), tf.log1p(tf.exp(tf.neg(tf.abs(z)))));
      return tf.mean(weighted(perRow)) as tf.Scalar;
    }
    if (task === 'multiclass') return tf.neg(tf.mean(weighted(tf.sum(tf.mul(labels, tf.logSoftmax(logits)), 1, rowWeights !== undefined)))) as tf.Scalar;
    return tf.mean(tf.square(tf.sub(logits, labels))) as tf.Scalar;
  });
}

/** `l2 * sum(kernel^2)` over every kernel (biases are not penalised). */
export function l2Penalty(network: Network, l2: number): tf.Scalar {
  return tf.tidy(() => {
    const sums = [...network.hidden, network.output].map((layer) => tf.sum(tf.square(layer.kernel)));
    return tf.mul(tf.addN(sums), l2) as tf.Scalar;
  });
}

/** The network shape a request describes. */
export function networkSpec(trialId: number, seed: number, configuration: TrialConfiguration, inputCount: number, outputCount: number): NetworkSpec {
  const { depth, width, activation, shape, block } = configuration;
  return { trialId, seed, inputCount, outputCount, depth, width, activation, ...(shape ? { shape } : {}), ...(block ? { block } : {}) };
}
