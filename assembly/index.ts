// The training engine: one fused training step (gather, forward, loss, backward, optimizer update
// layer by layer) and a chunked evaluation pass, over a trial laid out once in this memory by
// src/engine/. Nothing here allocates.
import { activateRows, backRows, multiplyRows } from './activations';
import {
  ACTIVATED, ACTIVATION, BATCH_X, BETA1, BETA2, BIAS, BIAS_GRADIENT, BIAS_SLOT1, BIAS_SLOT2, constant, DELTA, DEPTH, DROPOUT,
  FAN_IN, FAN_OUT, IN_STRIDE, KERNEL, KERNEL_GRADIENT, KERNEL_SLOT1, KERNEL_SLOT2, L2, layerField, MASK, OPTIMIZER, OUT_STRIDE,
  OUTPUT, OUTPUTS, POWER1, POWER2, PRE_ACTIVATION, SCRATCH, setConstant, TASK, TWICE_L2, UPDATE, word, pointer, BLOCKS,
} from './layout';
import { gatherBatch } from './batch';
import { outputLoss } from './losses';
import { columnSums, gemm, gemmTransposedA, transpose } from './matmul';
import { addL2, update } from './optimizers';
import { updateAfterBackward, updatesAfterBackward } from './regularisers';
import { forwardResidual, residualOutputLayer, trainResidualStep } from './residual';
import { trainingLoss } from './smoothed-losses';

export { gemm } from './matmul';

const ADAM = 2;

/** Where JavaScript may start laying out trials (above this module's static data). */
export function heapBase(): usize {
  return __heap_base;
}

// @ts-ignore: decorator
@inline function field(net: usize, layer: i32, name: i32): i32 {
  return layerField(net, layer, name);
}

// @ts-ignore: decorator
@inline function address(net: usize, layer: i32, name: i32): usize {
  return <usize>layerField(net, layer, name);
}

/** The input the layer after `layer` reads: the masked output when dropout is on during training. */
// @ts-ignore: decorator
@inline function layerOutput(net: usize, layer: i32, training: bool): usize {
  return training && word(net, DROPOUT) != 0 ? address(net, layer, OUTPUT) : address(net, layer, ACTIVATED);
}

/** Forward pass of `rows` rows starting at x (stride: the first layer's input stride); logits land in the output layer's PRE_ACTIVATION. */
function forward(net: usize, x: usize, rows: i32, training: bool): void {
  const depth = word(net, DEPTH);
  const kind = word(net, ACTIVATION);
  let input = x;
  for (let l = 0; l <= depth; l++) {
    const outStride = field(net, l, OUT_STRIDE);
    const z = address(net, l, PRE_ACTIVATION);
    gemm(input, field(net, l, IN_STRIDE), address(net, l, KERNEL), outStride, address(net, l, BIAS), z, outStride, rows, field(net, l, FAN_IN), outStride);
    if (l == depth) break;
    activateRows(kind, z, address(net, l, ACTIVATED), outStride, rows, field(net, l, FAN_OUT));
    if (training && word(net, DROPOUT) != 0) multiplyRows(address(net, l, ACTIVATED), address(net, l, MASK), address(net, l, OUTPUT), rows * outStride);
    input = layerOutput(net, l, training);
  }
}

/**
 * One training step on rows order[start .. start + rows) of the training set: returns the batch's
 * mean data loss (the L2 term is minimised but not reported). With UPDATE = 0 the step only leaves
 * the gradients (L2 term included) in the gradient buffers.
 */
export function trainStep(net: usize, start: i32, rows: i32): f64 {
  if (word(net, BLOCKS) != 0) return trainResidualStep(net, start, rows);
  const depth = word(net, DEPTH);
  gatherBatch(net, start, rows);
  const batchX = pointer(net, BATCH_X);
  forward(net, batchX, rows, true);
  const loss = trainingLoss(net, depth, rows);

  const kind = word(net, ACTIVATION);
  const optimizer = word(net, OPTIMIZER);
  const dropout = word(net, DROPOUT) != 0;
  const applying = word(net, UPDATE) != 0;
  const l2 = word(net, L2) != 0;
  const later = updatesAfterBackward(net);
  const scratch = pointer(net, SCRATCH);
  for (let l = depth; l >= 0; l--) {
    const fanIn = field(net, l, FAN_IN), fanOut = field(net, l, FAN_OUT);
    const inStride = field(net, l, IN_STRIDE), outStride = field(net, l, OUT_STRIDE);
    const delta = address(net, l, DELTA);
    if (l < depth) {
      if (dropout) multiplyRows(delta, address(net, l, MASK), delta, rows * outStride);
      backRows(kind, address(net, l, PRE_ACTIVATION), address(net, l, ACTIVATED), delta, outStride, rows);
    }
    const input = l == 0 ? batchX : layerOutput(net, l - 1, true);
    const kernel = address(net, l, KERNEL), kernelGradient = address(net, l, KERNEL_GRADIENT);
    gemmTransposedA(input, inStride, delta, outStride, kernelGradient, outStride, rows, fanIn, outStride);
    columnSums(delta, outStride, address(net, l, BIAS_GRADIENT), rows, outStride);
    if (l > 0) {
      // the gradient of the layer below, with this layer's weights before their update
      transpose(kernel, outStride, scratch, inStride, fanIn, fanOut);
      gemm(delta, outStride, scratch, inStride, 0, address(net, l - 1, DELTA), inStride, rows, fanOut, inStride);
    }
    const kernelCount = fanIn * outStride;
    if (applying && !later) {
      update(optimizer, kernel, kernelGradient, address(net, l, KERNEL_SLOT1), address(net, l, KERNEL_SLOT2), kernelCount, l2, net);
      update(optimizer, address(net, l, BIAS), address(net, l, BIAS_GRADIENT), address(net, l, BIAS_SLOT1), address(net, l, BIAS_SLOT2), outStride, false, net);
    } else if (l2) addL2(kernel, kernelGradient, kernelCount, constant(net, TWICE_L2));
  }
  if (applying && later) updateAfterBackward(net, depth, optimizer);
  if (applying && optimizer == ADAM) {
    setConstant(net, POWER1, constant(net, POWER1) * constant(net, BETA1));
    setConstant(net, POWER2, constant(net, POWER2) * constant(net, BETA2));
  }
  return loss / <f64>rows;
}

/**
 * Mean loss over `rows` rows of x (first-layer stride) and labels y, in chunks of at most `chunk`
 * rows, every row weighing the same (class weights are for training only); the output function's values go to `out` (rows x outputs, no padding).
 */
export function evaluate(net: usize, x: usize, y: usize, rows: i32, chunk: i32, out: usize): f64 {
  const residual = word(net, BLOCKS) != 0;
  // the output layer's index
  const depth = residual ? residualOutputLayer(net) : word(net, DEPTH);
  const rowBytes = <usize>field(net, 0, IN_STRIDE) << 2;
  const outputs = word(net, OUTPUTS);
  const stride = field(net, depth, OUT_STRIDE);
  const probabilities = address(net, depth, ACTIVATED);
  let total: f64 = 0;
  for (let s = 0; s < rows; s += chunk) {
    const n = min(chunk, rows - s);
    if (residual) forwardResidual(net, x + <usize>s * rowBytes, n, false);
    else forward(net, x + <usize>s * rowBytes, n, false);
    total += outputLoss(word(net, TASK), address(net, depth, PRE_ACTIVATION), probabilities, 0, stride, n, outputs, y + (<usize>s << 2), n, 0);
    for (let r = 0; r < n; r++) {
      memory.copy(out + ((<usize>(s + r) * <usize>outputs) << 2), probabilities + ((<usize>r * <usize>stride) << 2), <usize>outputs << 2);
    }
  }
  return total / <f64>rows;
}
