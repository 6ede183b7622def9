// Layer normalisation over each row's features, forward and backward.
// Source: Ba, Kiros, Hinton, "Layer Normalization", 2016, section 3 (from memory); the variance without Bessel's
// correction; epsilon as NORM_EPSILON in src/trainers/shared/layer-plan.ts.

const EPSILON: f32 = 1e-5;

// @ts-ignore: decorator
@inline function at(base: usize, row: usize, column: i32): usize {
  return base + row + (<usize>column << 2);
}

/**
 * For rows x width inputs X (row stride ld): XHAT = (X - mean) / sqrt(variance + epsilon) and
 * Y = gain * XHAT + bias per row, 1 / sqrt(variance + epsilon) per row into `inverse`; padding
 * columns of XHAT and Y set to zero.
 */
export function normRows(x: usize, xhat: usize, y: usize, inverse: usize, gain: usize, bias: usize, ld: i32, rows: i32, width: i32): void {
  const n = <f32>width;
  for (let r = 0; r < rows; r++) {
    const row = (<usize>r * <usize>ld) << 2;
    let sum: f32 = 0;
    for (let c = 0; c < width; c++) sum += load<f32>(at(x, row, c));
    const mean = sum / n;
    let squares: f32 = 0;
    for (let c = 0; c < width; c++) {
      const d = load<f32>(at(x, row, c)) - mean;
      squares += d * d;
    }
    const inv = <f32>1 / Mathf.sqrt(squares / n + EPSILON);
    store<f32>(inverse + (<usize>r << 2), inv);
    for (let c = 0; c < width; c++) {
      const h = (load<f32>(at(x, row, c)) - mean) * inv;
      store<f32>(at(xhat, row, c), h);
      store<f32>(at(y, row, c), h * load<f32>(gain + (<usize>c << 2)) + load<f32>(bias + (<usize>c << 2)));
    }
    for (let c = width; c < ld; c++) {
      store<f32>(at(xhat, row, c), 0);
      store<f32>(at(y, row, c), 0);
    }
  }
}

/**
 * From DY, the gradient of Y (rows x width, stride ld): the gain and bias gradients (sums over the
 * rows, padding zero), and the gradient of X,
 * inverse x (g - mean(g) - XHAT x mean(g x XHAT)) with g = DY x gain, written into DX, or added to
 * it when `accumulate` (the residual stream's gradient already holds the skip path's).
 */
export function normBack(dy: usize, xhat: usize, inverse: usize, gain: usize, gainGradient: usize, biasGradient: usize, dx: usize, ld: i32, rows: i32, width: i32, accumulate: bool): void {
  memory.fill(gainGradient, 0, <usize>ld << 2);
  memory.fill(biasGradient, 0, <usize>ld << 2);
  const n = <f32>width;
  for (let r = 0; r < rows; r++) {
    const row = (<usize>r * <usize>ld) << 2;
    let meanG: f32 = 0;
    let meanGX: f32 = 0;
    for (let c = 0; c < width; c++) {
      const d = load<f32>(at(dy, row, c));
      const h = load<f32>(at(xhat, row, c));
      const g = d * load<f32>(gain + (<usize>c << 2));
      meanG += g;
      meanGX += g * h;
      store<f32>(gainGradient + (<usize>c << 2), load<f32>(gainGradient + (<usize>c << 2)) + d * h);
      store<f32>(biasGradient + (<usize>c << 2), load<f32>(biasGradient + (<usize>c << 2)) + d);
    }
    meanG /= n;
    meanGX /= n;
    const inv = load<f32>(inverse + (<usize>r << 2));
    for (let c = 0; c < width; c++) {
      const g = load<f32>(at(dy, row, c)) * load<f32>(gain + (<usize>c << 2));
      const value = inv * (g - meanG - load<f32>(at(xhat, row, c)) * meanGX);
      store<f32>(at(dx, row, c), accumulate ? load<f32>(at(dx, row, c)) + value : value);
    }
    if (!accumulate) for (let c = width; c < ld; c++) store<f32>(at(dx, row, c), 0);
  }
}

/** A = A + B element-wise over `count` floats (a multiple of 4): a block's output added to the residual stream. */
export function addRows(a: usize, b: usize, count: i32): void {
  for (let i = 0; i < count; i += 4) {
    const offset = <usize>i << 2;
    v128.store(a + offset, f32x4.add(v128.load(a + offset), v128.load(b + offset)));
  }
}
