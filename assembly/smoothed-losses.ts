// Classification losses with label smoothing (Szegedy, Vanhoucke, Ioffe, Shlens, Wojna, "Rethinking
// the Inception Architecture for Computer Vision", CVPR 2016, section 7): the target of class c is
// keep * [c == label] + share, keep = 1 - epsilon and share = epsilon / classes (binary: the 0/1 label
// y becomes keep * y + share with share = epsilon / 2), as tf.losses.softmaxCrossEntropy and
// tf.losses.sigmoidCrossEntropy smooth their labels. Training only; the validation loss keeps the true labels.
// The plain step (index.ts) and the residual one (residual.ts) both take their loss from `trainingLoss`.
import {
  ACTIVATED, BATCH_Y, CLASS_WEIGHTS, constant, DELTA, layerField, OUT_STRIDE, OUTPUTS, pointer, PRE_ACTIVATION, SMOOTHING_KEEP, SMOOTHING_SHARE, TASK, word,
} from './layout';
import { BINARY, MULTICLASS, outputLoss } from './losses';

/** Binary: one row's loss from logit x and smoothed target t; writes the probability and the gradient (times `scale`). */
// @ts-ignore: decorator
@inline function binaryRow(z: usize, p: usize, d: usize, row: usize, t: f32, scale: f32): f32 {
  const x = load<f32>(z + row);
  const probability = <f32>1 / (<f32>1 + Mathf.exp(-x));
  store<f32>(p + row, probability);
  if (d != 0) store<f32>(d + row, (probability - t) * scale);
  return (x > 0 ? x : 0) - x * t + Mathf.log1p(Mathf.exp(-Mathf.abs(x)));
}

/** Multiclass: one row's loss sum_c t_c (logSumExp - z_c); writes the softmax and the gradient p_c - t_c (times `scale`). */
function multiclassRow(z: usize, p: usize, d: usize, row: usize, outputs: i32, label: i32, keep: f32, share: f32, scale: f32): f32 {
  let largest = load<f32>(z + row);
  for (let c = 1; c < outputs; c++) largest = max(largest, load<f32>(z + row + (<usize>c << 2)));
  let sum: f32 = 0;
  for (let c = 0; c < outputs; c++) {
    const e = Mathf.exp(load<f32>(z + row + (<usize>c << 2)) - largest);
    store<f32>(p + row + (<usize>c << 2), e);
    sum += e;
  }
  const logSum = largest + Mathf.log(sum);
  let loss: f32 = 0;
  for (let c = 0; c < outputs; c++) {
    const at = row + (<usize>c << 2);
    const target = (c == label ? keep : <f32>0) + share;
    const probability = load<f32>(p + at) / sum;
    store<f32>(p + at, probability);
    loss += target * (logSum - load<f32>(z + at));
    if (d != 0) store<f32>(d + at, (probability - target) * scale);
  }
  return loss;
}

/**
 * outputLoss (losses.ts) for classification with smoothed targets: the output function into P, the
 * gradient of the mean smoothed loss over `scaleRows` rows into D (padding columns zero), the summed
 * per-row smoothed loss returned; class weights as there (weights[label of r] on row r).
 */
export function smoothedOutputLoss(task: i32, z: usize, p: usize, d: usize, ld: i32, rows: i32, outputs: i32, labels: usize, scaleRows: i32, weights: usize, keep: f32, share: f32): f64 {
  let total: f64 = 0;
  const inverse: f32 = <f32>1 / <f32>scaleRows;
  for (let r = 0; r < rows; r++) {
    const row = (<usize>r * <usize>ld) << 2;
    const y = load<f32>(labels + (<usize>r << 2));
    const weight: f32 = weights != 0 ? load<f32>(weights + (<usize><i32>y << 2)) : <f32>1;
    const scale: f32 = weight * inverse;
    if (task == BINARY) total += <f64>(weight * binaryRow(z, p, d, row, y * keep + share, scale));
    else if (task == MULTICLASS) total += <f64>(weight * multiclassRow(z, p, d, row, outputs, <i32>y, keep, share, scale));
    if (d != 0) for (let c = outputs; c < ld; c++) store<f32>(d + row + (<usize>c << 2), 0);
  }
  return total;
}

/**
 * The training step's summed batch loss at output layer `out` (logits in its PRE_ACTIVATION, labels in
 * BATCH_Y): the output function into its ACTIVATED, the loss gradient into its DELTA, against smoothed
 * targets when label smoothing is on.
 */
export function trainingLoss(net: usize, out: i32, rows: i32): f64 {
  const z = <usize>layerField(net, out, PRE_ACTIVATION), p = <usize>layerField(net, out, ACTIVATED), d = <usize>layerField(net, out, DELTA);
  const ld = layerField(net, out, OUT_STRIDE);
  const keep = constant(net, SMOOTHING_KEEP);
  return keep != 0
    ? smoothedOutputLoss(word(net, TASK), z, p, d, ld, rows, word(net, OUTPUTS), pointer(net, BATCH_Y), rows, pointer(net, CLASS_WEIGHTS), keep, constant(net, SMOOTHING_SHARE))
    : outputLoss(word(net, TASK), z, p, d, ld, rows, word(net, OUTPUTS), pointer(net, BATCH_Y), rows, pointer(net, CLASS_WEIGHTS));
}
