// Regularisers that change the optimizer update: decoupled weight decay (Loshchilov and Hutter,
// "Decoupled Weight Decay Regularization", ICLR 2019, Algorithms 1 and 2) and gradient-norm clipping
// (Pascanu, Mikolov, Bengio, "On the difficulty of training recurrent neural networks", ICML 2013,
// Algorithm 1). Both need every layer's gradient before any update (clipping needs the norm of all of
// them), so with either on the step leaves the gradients (L2 term included) and updates afterwards.
// The plain step (index.ts) and the residual one (residual.ts) both end here; a layer that reads a
// layer normalisation (residual blocks) has its gain and bias clipped and updated with it, never decayed.
import {
  BIAS, BIAS_GRADIENT, BIAS_SLOT1, BIAS_SLOT2, constant, FAN_IN, IN_STRIDE, KERNEL, KERNEL_GRADIENT, KERNEL_SLOT1, KERNEL_SLOT2, layerField,
  MAX_GRADIENT_NORM, NORM_BIAS, NORM_BIAS_GRADIENT, NORM_BIAS_SLOT1, NORM_BIAS_SLOT2, NORM_GAIN, NORM_GAIN_GRADIENT, NORM_GAIN_SLOT1,
  NORM_GAIN_SLOT2, OUT_STRIDE, UPDATE_AFTER_BACKWARD, WEIGHT_DECAY_STEP, word,
} from './layout';
import { update } from './optimizers';

/** Whether this trial updates after the whole backward pass (a regulariser here is on). */
// @ts-ignore: decorator
@inline export function updatesAfterBackward(net: usize): bool {
  return word(net, UPDATE_AFTER_BACKWARD) != 0;
}

/** w <- w - factor * w over `count` floats (padding stays zero). */
export function decay(w: usize, count: i32, factor: f32): void {
  const k = f32x4.splat(factor);
  for (let i = 0; i < count; i += 4) {
    const at = <usize>i << 2;
    const wv = v128.load(w + at);
    v128.store(w + at, f32x4.sub(wv, f32x4.mul(k, wv)));
  }
}

/** The sum of squares of `count` floats (four float32 lanes, then added in double). */
export function sumOfSquares(g: usize, count: i32): f64 {
  let acc = f32x4.splat(0);
  for (let i = 0; i < count; i += 4) {
    const gv = v128.load(g + (<usize>i << 2));
    acc = f32x4.add(acc, f32x4.mul(gv, gv));
  }
  return <f64>f32x4.extract_lane(acc, 0) + <f64>f32x4.extract_lane(acc, 1) + <f64>f32x4.extract_lane(acc, 2) + <f64>f32x4.extract_lane(acc, 3);
}

/** g <- factor * g over `count` floats. */
function scale(g: usize, count: i32, factor: f32): void {
  const k = f32x4.splat(factor);
  for (let i = 0; i < count; i += 4) {
    const at = <usize>i << 2;
    v128.store(g + at, f32x4.mul(v128.load(g + at), k));
  }
}

/** Whether layer l reads a layer normalisation (residual blocks), whose gain and bias then train with it. */
// @ts-ignore: decorator
@inline function readsNorm(net: usize, l: i32): bool {
  return layerField(net, l, NORM_GAIN) != 0;
}

/**
 * The norm of every gradient together (layers 0 .. depth: kernels, biases, and the gains and
 * biases of the layer normalisations the layers read).
 */
export function gradientNorm(net: usize, depth: i32): f64 {
  let total: f64 = 0;
  for (let l = 0; l <= depth; l++) {
    const outStride = layerField(net, l, OUT_STRIDE);
    total += sumOfSquares(<usize>layerField(net, l, KERNEL_GRADIENT), layerField(net, l, FAN_IN) * outStride);
    total += sumOfSquares(<usize>layerField(net, l, BIAS_GRADIENT), outStride);
    if (!readsNorm(net, l)) continue;
    const normStride = layerField(net, l, IN_STRIDE);
    total += sumOfSquares(<usize>layerField(net, l, NORM_GAIN_GRADIENT), normStride);
    total += sumOfSquares(<usize>layerField(net, l, NORM_BIAS_GRADIENT), normStride);
  }
  return Math.sqrt(total);
}

/** Rescales every gradient to norm `limit` when their norm is above it (g <- g * limit / norm). */
function clipGradients(net: usize, depth: i32, limit: f32): void {
  const norm = gradientNorm(net, depth);
  if (norm <= <f64>limit) return;
  const factor = <f32>(<f64>limit / norm);
  for (let l = 0; l <= depth; l++) {
    const outStride = layerField(net, l, OUT_STRIDE);
    scale(<usize>layerField(net, l, KERNEL_GRADIENT), layerField(net, l, FAN_IN) * outStride, factor);
    scale(<usize>layerField(net, l, BIAS_GRADIENT), outStride, factor);
    if (!readsNorm(net, l)) continue;
    const normStride = layerField(net, l, IN_STRIDE);
    scale(<usize>layerField(net, l, NORM_GAIN_GRADIENT), normStride, factor);
    scale(<usize>layerField(net, l, NORM_BIAS_GRADIENT), normStride, factor);
  }
}

/** The optimizer step of layer l's normalisation gain and bias (not decayed: see updateAfterBackward). */
function updateNorm(net: usize, l: i32, optimizer: i32): void {
  const stride = layerField(net, l, IN_STRIDE);
  update(optimizer, <usize>layerField(net, l, NORM_GAIN), <usize>layerField(net, l, NORM_GAIN_GRADIENT), <usize>layerField(net, l, NORM_GAIN_SLOT1), <usize>layerField(net, l, NORM_GAIN_SLOT2), stride, false, net);
  update(optimizer, <usize>layerField(net, l, NORM_BIAS), <usize>layerField(net, l, NORM_BIAS_GRADIENT), <usize>layerField(net, l, NORM_BIAS_SLOT1), <usize>layerField(net, l, NORM_BIAS_SLOT2), stride, false, net);
}

/**
 * The optimizer update of every layer once the backward pass has left all gradients (the L2 term
 * already in them): clip them together, decay each kernel (biases are not decayed, as L2 leaves
 * them, nor are layer-normalisation gains and biases, which scale and shift the normalised stream
 * rather than add capacity), then the optimizer's own step.
 */
export function updateAfterBackward(net: usize, depth: i32, optimizer: i32): void {
  const limit = constant(net, MAX_GRADIENT_NORM);
  if (limit > 0) clipGradients(net, depth, limit);
  const decayFactor = constant(net, WEIGHT_DECAY_STEP);
  for (let l = 0; l <= depth; l++) {
    const outStride = layerField(net, l, OUT_STRIDE);
    const kernel = <usize>layerField(net, l, KERNEL);
    const kernelCount = layerField(net, l, FAN_IN) * outStride;
    if (decayFactor != 0) decay(kernel, kernelCount, decayFactor);
    update(optimizer, kernel, <usize>layerField(net, l, KERNEL_GRADIENT), <usize>layerField(net, l, KERNEL_SLOT1), <usize>layerField(net, l, KERNEL_SLOT2), kernelCount, false, net);
    update(optimizer, <usize>layerField(net, l, BIAS), <usize>layerField(net, l, BIAS_GRADIENT), <usize>layerField(net, l, BIAS_SLOT1), <usize>layerField(net, l, BIAS_SLOT2), outStride, false, net);
    if (readsNorm(net, l)) updateNorm(net, l, optimizer);
  }
}
