// Residual blocks with layer normalisation (Gorishniy et al., "Revisiting Deep Learning Models for
// Tabular Data", NeurIPS 2021, section 3.2, from memory): layer 0 maps the inputs to the residual stream; block b
// is layers 1 + 2b (reads the normalised stream, activation, dropout) and 2 + 2b (dropout, added to
// the stream); the output layer reads the activation of the normalised stream. The plain stack's
// step (index.ts) stays as it was; this is its counterpart for residual networks, sharing its batch
// gather (batch.ts), its loss with label smoothing (smoothed-losses.ts) and its update after the
// backward pass for weight decay and clipping (regularisers.ts).
import { activateRows, backRows, multiplyRows } from './activations';
import {
  ACTIVATED, ACTIVATION, BATCH_X, BETA1, BETA2, BIAS, BIAS_GRADIENT, BIAS_SLOT1, BIAS_SLOT2, constant, DELTA, DEPTH, DROPOUT,
  FAN_IN, FAN_OUT, IN_STRIDE, INVERSE_STD, KERNEL, KERNEL_GRADIENT, KERNEL_SLOT1, KERNEL_SLOT2, L2, layerField, MASK, NORM_ACTIVATED, NORM_BIAS,
  NORM_BIAS_GRADIENT, NORM_BIAS_SLOT1, NORM_BIAS_SLOT2, NORM_DELTA, NORM_GAIN, NORM_GAIN_GRADIENT, NORM_GAIN_SLOT1, NORM_GAIN_SLOT2, NORM_OUTPUT,
  NORMALISED, OPTIMIZER, OUT_STRIDE, OUTPUT, POWER1, POWER2, PRE_ACTIVATION, RESIDUAL, RESIDUAL_DELTA, SCRATCH, setConstant,
  TWICE_L2, UPDATE, word, pointer,
} from './layout';
import { gatherBatch } from './batch';
import { columnSums, gemm, gemmTransposedA, transpose } from './matmul';
import { addRows, normBack, normRows } from './norm';
import { addL2, update } from './optimizers';
import { updateAfterBackward, updatesAfterBackward } from './regularisers';
import { trainingLoss } from './smoothed-losses';

const ADAM = 2;

// @ts-ignore: decorator
@inline function field(net: usize, layer: i32, name: i32): i32 {
  return layerField(net, layer, name);
}

// @ts-ignore: decorator
@inline function address(net: usize, layer: i32, name: i32): usize {
  return <usize>layerField(net, layer, name);
}

/** The output layer's index: layer 0, two per block, then the output layer. */
// @ts-ignore: decorator
@inline export function residualOutputLayer(net: usize): i32 {
  return 2 * word(net, DEPTH) + 1;
}

/** Z = input . kernel + bias for `rows` rows into the layer's PRE_ACTIVATION. */
function dense(net: usize, l: i32, input: usize, rows: i32): void {
  const outStride = field(net, l, OUT_STRIDE);
  gemm(input, field(net, l, IN_STRIDE), address(net, l, KERNEL), outStride, address(net, l, BIAS), address(net, l, PRE_ACTIVATION), outStride, rows, field(net, l, FAN_IN), outStride);
}

/** The layer's normalisation of the residual stream into its NORM_OUTPUT. */
function normalise(net: usize, l: i32, rows: i32): void {
  normRows(pointer(net, RESIDUAL), address(net, l, NORMALISED), address(net, l, NORM_OUTPUT), address(net, l, INVERSE_STD), address(net, l, NORM_GAIN), address(net, l, NORM_BIAS), field(net, l, IN_STRIDE), rows, field(net, l, FAN_IN));
}

/** Forward pass of a residual network; logits land in the output layer's PRE_ACTIVATION. */
export function forwardResidual(net: usize, x: usize, rows: i32, training: bool): void {
  const blocks = word(net, DEPTH);
  const kind = word(net, ACTIVATION);
  const dropout = training && word(net, DROPOUT) != 0;
  const stream = pointer(net, RESIDUAL);
  const streamStride = field(net, 0, OUT_STRIDE);
  dense(net, 0, x, rows);
  memory.copy(stream, address(net, 0, PRE_ACTIVATION), <usize>(rows * streamStride) << 2);
  for (let b = 0; b < blocks; b++) {
    const inner = 1 + 2 * b, outer = 2 + 2 * b;
    const innerStride = field(net, inner, OUT_STRIDE);
    normalise(net, inner, rows);
    dense(net, inner, address(net, inner, NORM_OUTPUT), rows);
    activateRows(kind, address(net, inner, PRE_ACTIVATION), address(net, inner, ACTIVATED), innerStride, rows, field(net, inner, FAN_OUT));
    if (dropout) multiplyRows(address(net, inner, ACTIVATED), address(net, inner, MASK), address(net, inner, OUTPUT), rows * innerStride);
    dense(net, outer, dropout ? address(net, inner, OUTPUT) : address(net, inner, ACTIVATED), rows);
    if (dropout) multiplyRows(address(net, outer, PRE_ACTIVATION), address(net, outer, MASK), address(net, outer, OUTPUT), rows * streamStride);
    addRows(stream, dropout ? address(net, outer, OUTPUT) : address(net, outer, PRE_ACTIVATION), rows * streamStride);
  }
  const out = residualOutputLayer(net);
  normalise(net, out, rows);
  activateRows(kind, address(net, out, NORM_OUTPUT), address(net, out, NORM_ACTIVATED), streamStride, rows, field(net, out, FAN_IN));
  dense(net, out, address(net, out, NORM_ACTIVATED), rows);
}

/**
 * Applies the optimizer to a run of `count` parameters, or only adds the L2 term to the gradient when
 * `l2` if UPDATE = 0 or the update waits for the whole backward pass (regularisers.ts).
 */
function apply(net: usize, w: usize, g: usize, s1: usize, s2: usize, count: i32, l2: bool): void {
  if (word(net, UPDATE) != 0 && !updatesAfterBackward(net)) update(word(net, OPTIMIZER), w, g, s1, s2, count, l2, net);
  else if (l2) addL2(w, g, count, constant(net, TWICE_L2));
}

/**
 * Layer l's kernel and bias gradients from its input and `delta`, the gradient of its input into
 * `below` (when not 0) with the weights before their update, then the update.
 */
function backDense(net: usize, l: i32, input: usize, delta: usize, rows: i32, below: usize): void {
  const fanIn = field(net, l, FAN_IN), fanOut = field(net, l, FAN_OUT);
  const inStride = field(net, l, IN_STRIDE), outStride = field(net, l, OUT_STRIDE);
  const kernel = address(net, l, KERNEL), kernelGradient = address(net, l, KERNEL_GRADIENT);
  gemmTransposedA(input, inStride, delta, outStride, kernelGradient, outStride, rows, fanIn, outStride);
  columnSums(delta, outStride, address(net, l, BIAS_GRADIENT), rows, outStride);
  if (below != 0) {
    const scratch = pointer(net, SCRATCH);
    transpose(kernel, outStride, scratch, inStride, fanIn, fanOut);
    gemm(delta, outStride, scratch, inStride, 0, below, inStride, rows, fanOut, inStride);
  }
  apply(net, kernel, kernelGradient, address(net, l, KERNEL_SLOT1), address(net, l, KERNEL_SLOT2), fanIn * outStride, word(net, L2) != 0);
  apply(net, address(net, l, BIAS), address(net, l, BIAS_GRADIENT), address(net, l, BIAS_SLOT1), address(net, l, BIAS_SLOT2), outStride, false);
}

/** Layer l's normalisation: gain and bias gradients from `dy`, the stream's gradient set or accumulated, then the update. */
function backNorm(net: usize, l: i32, dy: usize, rows: i32, accumulate: bool): void {
  const stride = field(net, l, IN_STRIDE);
  const gain = address(net, l, NORM_GAIN), gainGradient = address(net, l, NORM_GAIN_GRADIENT), biasGradient = address(net, l, NORM_BIAS_GRADIENT);
  normBack(dy, address(net, l, NORMALISED), address(net, l, INVERSE_STD), gain, gainGradient, biasGradient, pointer(net, RESIDUAL_DELTA), stride, rows, field(net, l, FAN_IN), accumulate);
  apply(net, gain, gainGradient, address(net, l, NORM_GAIN_SLOT1), address(net, l, NORM_GAIN_SLOT2), stride, false);
  apply(net, address(net, l, NORM_BIAS), biasGradient, address(net, l, NORM_BIAS_SLOT1), address(net, l, NORM_BIAS_SLOT2), stride, false);
}

/** The backward pass through the blocks, last first, from the stream's gradient in RESIDUAL_DELTA. */
function backBlocks(net: usize, rows: i32): void {
  const kind = word(net, ACTIVATION);
  const dropout = word(net, DROPOUT) != 0;
  const stream = pointer(net, RESIDUAL_DELTA);
  const streamStride = field(net, 0, OUT_STRIDE);
  for (let b = word(net, DEPTH) - 1; b >= 0; b--) {
    const inner = 1 + 2 * b, outer = 2 + 2 * b;
    const innerStride = field(net, inner, OUT_STRIDE);
    let delta = stream;
    if (dropout) {
      delta = address(net, outer, DELTA);
      multiplyRows(stream, address(net, outer, MASK), delta, rows * streamStride);
    }
    const innerDelta = address(net, inner, DELTA);
    backDense(net, outer, dropout ? address(net, inner, OUTPUT) : address(net, inner, ACTIVATED), delta, rows, innerDelta);
    if (dropout) multiplyRows(innerDelta, address(net, inner, MASK), innerDelta, rows * innerStride);
    backRows(kind, address(net, inner, PRE_ACTIVATION), address(net, inner, ACTIVATED), innerDelta, innerStride, rows);
    backDense(net, inner, address(net, inner, NORM_OUTPUT), innerDelta, rows, pointer(net, NORM_DELTA));
    backNorm(net, inner, pointer(net, NORM_DELTA), rows, true);
  }
}

/** The residual network's training step: the same contract as `trainStep` in index.ts. */
export function trainResidualStep(net: usize, start: i32, rows: i32): f64 {
  gatherBatch(net, start, rows);
  const batchX = pointer(net, BATCH_X);
  forwardResidual(net, batchX, rows, true);
  const out = residualOutputLayer(net);
  const loss = trainingLoss(net, out, rows);
  const normDelta = pointer(net, NORM_DELTA);
  backDense(net, out, address(net, out, NORM_ACTIVATED), address(net, out, DELTA), rows, normDelta);
  backRows(word(net, ACTIVATION), address(net, out, NORM_OUTPUT), address(net, out, NORM_ACTIVATED), normDelta, field(net, out, IN_STRIDE), rows);
  backNorm(net, out, normDelta, rows, false);
  backBlocks(net, rows);
  backDense(net, 0, batchX, pointer(net, RESIDUAL_DELTA), rows, 0);
  if (word(net, UPDATE) != 0 && updatesAfterBackward(net)) updateAfterBackward(net, out, word(net, OPTIMIZER));
  if (word(net, UPDATE) != 0 && word(net, OPTIMIZER) == ADAM) {
    setConstant(net, POWER1, constant(net, POWER1) * constant(net, BETA1));
    setConstant(net, POWER2, constant(net, POWER2) * constant(net, BETA2));
  }
  return loss / <f64>rows;
}
