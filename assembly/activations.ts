// Hidden-layer activations, forward and derivative, with the tfjs 4.22 kernels' semantics
// (tfjs-core gradients/*_grad.js, tfjs-backend-cpu kernels): the codes match ACTIVATIONS in
// src/study/definition.ts by position.

export const RELU = 0;
export const LEAKY_RELU = 1;
export const ELU = 2;
export const SELU = 3;
export const TANH = 4;
export const SIGMOID = 5;
export const SOFTPLUS = 6;
export const SWISH = 7;
export const RELU6 = 8;

const LEAKY_SLOPE: f32 = 0.2;
const SELU_SCALE: f32 = 1.0507009873554804934193349852946;
const SELU_SCALE_ALPHA: f32 = 1.7580993408473768599402175208123;
// tfjs softplus: exp(x) below log(float32 epsilon) + 2, x above its negation, log(1 + exp(x)) between.
const SOFTPLUS_THRESHOLD: f32 = <f32>(Math.log(1.1920928955078125e-7) + 2.0);

// @ts-ignore: decorator
@inline function sigmoid(x: f32): f32 {
  return <f32>1 / (<f32>1 + Mathf.exp(-x));
}

/** The activation of one value. */
// @ts-ignore: decorator
@inline export function activate(kind: i32, x: f32): f32 {
  switch (kind) {
    case RELU: return x > 0 ? x : 0;
    case LEAKY_RELU: return x < 0 ? LEAKY_SLOPE * x : x;
    case ELU: return x >= 0 ? x : Mathf.exp(x) - 1;
    case SELU: return x > 0 ? SELU_SCALE * x : SELU_SCALE_ALPHA * (Mathf.exp(x) - 1);
    case TANH: return Mathf.tanh(x);
    case SIGMOID: return sigmoid(x);
    case SOFTPLUS: {
      if (x < SOFTPLUS_THRESHOLD) return Mathf.exp(x);
      if (x > -SOFTPLUS_THRESHOLD) return x;
      return Mathf.log(<f32>1 + Mathf.exp(x));
    }
    case SWISH: return x * sigmoid(x);
    default: return x < 0 ? 0 : x > 6 ? 6 : x; // RELU6
  }
}

/** d activation / d x, from the input z and the output y = activate(z). */
// @ts-ignore: decorator
@inline export function derivative(kind: i32, z: f32, y: f32): f32 {
  switch (kind) {
    case RELU: return z > 0 ? 1 : 0;
    case LEAKY_RELU: return z > 0 ? 1 : LEAKY_SLOPE;
    case ELU: return y >= 0 ? 1 : y + 1;
    case SELU: return z > 0 ? SELU_SCALE : SELU_SCALE_ALPHA * Mathf.exp(z);
    case TANH: return <f32>1 - y * y;
    case SIGMOID: return y * (<f32>1 - y);
    case SOFTPLUS: return sigmoid(z);
    case SWISH: {
      const s = sigmoid(z);
      return s + z * s * (<f32>1 - s);
    }
    default: return z > 0 && z <= 6 ? 1 : 0; // RELU6
  }
}

/**
 * Y = act(Z) over rows x width (stride `ld`); the padding columns width..ld of Y are set to zero
 * so that they contribute nothing to the next layer. relu, leakyRelu and relu6 run 4 lanes at a time.
 */
export function activateRows(kind: i32, z: usize, y: usize, ld: i32, rows: i32, width: i32): void {
  const total = rows * ld;
  if (kind == RELU || kind == LEAKY_RELU || kind == RELU6) {
    const zero = f32x4.splat(0);
    const slope = f32x4.splat(LEAKY_SLOPE);
    const six = f32x4.splat(6);
    for (let i = 0; i < total; i += 4) {
      const v = v128.load(z + (<usize>i << 2));
      let out: v128;
      if (kind == RELU) out = f32x4.max(v, zero);
      else if (kind == RELU6) out = f32x4.min(f32x4.max(v, zero), six);
      else out = v128.bitselect(f32x4.mul(v, slope), v, f32x4.lt(v, zero));
      v128.store(y + (<usize>i << 2), out);
    }
  } else {
    for (let i = 0; i < total; i++) store<f32>(y + (<usize>i << 2), activate(kind, load<f32>(z + (<usize>i << 2))));
  }
  if (width < ld) {
    for (let r = 0; r < rows; r++) for (let c = width; c < ld; c++) store<f32>(y + ((<usize>r * <usize>ld + <usize>c) << 2), 0);
  }
}

/** D = D * act'(Z) in place (D holds the gradient of the activation's output). */
export function backRows(kind: i32, z: usize, y: usize, d: usize, ld: i32, rows: i32): void {
  const total = rows * ld;
  if (kind == RELU) {
    const zero = f32x4.splat(0);
    for (let i = 0; i < total; i += 4) {
      const at = <usize>i << 2;
      v128.store(d + at, v128.and(v128.load(d + at), f32x4.gt(v128.load(z + at), zero)));
    }
    return;
  }
  for (let i = 0; i < total; i++) {
    const at = <usize>i << 2;
    store<f32>(d + at, load<f32>(d + at) * derivative(kind, load<f32>(z + at), load<f32>(y + at)));
  }
}

/** A = H * M element-wise (dropout masks hold 0 or 1/(1-rate)); also used for D = D * M. */
export function multiplyRows(h: usize, mask: usize, out: usize, count: i32): void {
  for (let i = 0; i < count; i += 4) {
    const at = <usize>i << 2;
    v128.store(out + at, f32x4.mul(v128.load(h + at), v128.load(mask + at)));
  }
}
