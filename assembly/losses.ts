// Output functions and losses, from the logits: the same formulas as lossFromLogits and
// outputFromLogits in src/trainers/tfjs/network.ts. Codes: 0 binary, 1 multiclass, 2 regression.

export const BINARY = 0;
export const MULTICLASS = 1;

/**
 * For rows x outputs logits Z (stride ld): writes the output function into P, the gradient of the
 * mean loss over `scaleRows` rows into D when D != 0 (padding columns zero), and returns the
 * summed per-row loss (f64). `labels` holds one value per row: 0/1, the class index, or the target.
 * With `weights` != 0 (classification), row r's loss and gradient are multiplied by
 * weights[label of r]: the weighted sum over rows, still divided by `scaleRows`.
 */
export function outputLoss(task: i32, z: usize, p: usize, d: usize, ld: i32, rows: i32, outputs: i32, labels: usize, scaleRows: i32, weights: usize): f64 {
  let total: f64 = 0;
  const inverse: f32 = <f32>1 / <f32>scaleRows;
  for (let r = 0; r < rows; r++) {
    const row = (<usize>r * <usize>ld) << 2;
    const y = load<f32>(labels + (<usize>r << 2));
    // 1 * x is exact, so rows of weight 1 give the unweighted figures bit for bit
    const weight: f32 = weights != 0 ? load<f32>(weights + (<usize><i32>y << 2)) : <f32>1;
    const scale: f32 = weight * inverse;
    if (task == BINARY) {
      const x = load<f32>(z + row);
      const probability = <f32>1 / (<f32>1 + Mathf.exp(-x));
      store<f32>(p + row, probability);
      // max(z, 0) - z*y + log(1 + exp(-|z|)): never exponentiates a large positive number.
      total += <f64>(weight * ((x > 0 ? x : 0) - x * y + Mathf.log1p(Mathf.exp(-Mathf.abs(x)))));
      if (d != 0) store<f32>(d + row, (probability - y) * scale);
    } else if (task == MULTICLASS) {
      let largest = load<f32>(z + row);
      for (let c = 1; c < outputs; c++) largest = max(largest, load<f32>(z + row + (<usize>c << 2)));
      let sum: f32 = 0;
      for (let c = 0; c < outputs; c++) {
        const e = Mathf.exp(load<f32>(z + row + (<usize>c << 2)) - largest);
        store<f32>(p + row + (<usize>c << 2), e);
        sum += e;
      }
      const label = <i32>y;
      const logSum = largest + Mathf.log(sum);
      total += <f64>(weight * (logSum - load<f32>(z + row + (<usize>label << 2))));
      for (let c = 0; c < outputs; c++) {
        const at = row + (<usize>c << 2);
        const probability = load<f32>(p + at) / sum;
        store<f32>(p + at, probability);
        if (d != 0) store<f32>(d + at, (probability - (c == label ? <f32>1 : <f32>0)) * scale);
      }
    } else {
      const x = load<f32>(z + row);
      store<f32>(p + row, x);
      const error = x - y;
      total += <f64>(error * error);
      if (d != 0) store<f32>(d + row, <f32>2 * error * inverse);
    }
    if (d != 0) for (let c = outputs; c < ld; c++) store<f32>(d + row + (<usize>c << 2), 0);
  }
  return total;
}
