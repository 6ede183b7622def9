// Optimizer updates over a flat run of `count` parameters (a kernel or a bias, padding included:
// padding has zero weight and zero gradient and stays zero). The gradient is g + 2 * l2 * w.
// Codes: 0 sgd, 1 momentum (heavy ball), 2 Adam, with tfjs 4.22's operation order.
import { BETA1, BETA2, constant, EPSILON, MOMENTUM_FACTOR, NEGATIVE_LEARNING_RATE, ONE_MINUS_BETA1, ONE_MINUS_BETA2, POWER1, POWER2, TWICE_L2 } from './layout';

export const SGD = 0;
export const MOMENTUM = 1;

/** Adds the L2 term to the stored gradient (gradient-only steps, for checking). */
export function addL2(w: usize, g: usize, count: i32, twiceL2: f32): void {
  const k = f32x4.splat(twiceL2);
  for (let i = 0; i < count; i += 4) {
    const at = <usize>i << 2;
    v128.store(g + at, f32x4.add(v128.load(g + at), f32x4.mul(k, v128.load(w + at))));
  }
}

/** One update of w from gradient g with slots s1 (momentum or first moment) and s2 (second moment). */
export function update(kind: i32, w: usize, g: usize, s1: usize, s2: usize, count: i32, l2: bool, net: usize): void {
  const lr = f32x4.splat(constant(net, NEGATIVE_LEARNING_RATE));
  const k = f32x4.splat(l2 ? constant(net, TWICE_L2) : 0);
  if (kind == SGD) {
    for (let i = 0; i < count; i += 4) {
      const at = <usize>i << 2;
      const wv = v128.load(w + at);
      const gv = f32x4.add(v128.load(g + at), f32x4.mul(k, wv));
      v128.store(w + at, f32x4.add(f32x4.mul(lr, gv), wv));
    }
  } else if (kind == MOMENTUM) {
    const mu = f32x4.splat(constant(net, MOMENTUM_FACTOR));
    for (let i = 0; i < count; i += 4) {
      const at = <usize>i << 2;
      const wv = v128.load(w + at);
      const gv = f32x4.add(v128.load(g + at), f32x4.mul(k, wv));
      const acc = f32x4.add(f32x4.mul(v128.load(s1 + at), mu), gv);
      v128.store(s1 + at, acc);
      v128.store(w + at, f32x4.add(f32x4.mul(lr, acc), wv));
    }
  } else {
    const b1 = f32x4.splat(constant(net, BETA1)), nb1 = f32x4.splat(constant(net, ONE_MINUS_BETA1));
    const b2 = f32x4.splat(constant(net, BETA2)), nb2 = f32x4.splat(constant(net, ONE_MINUS_BETA2));
    // tfjs: sub(1, accBeta1) in float32
    const p1 = f32x4.splat(<f32>1 - constant(net, POWER1)), p2 = f32x4.splat(<f32>1 - constant(net, POWER2));
    const eps = f32x4.splat(constant(net, EPSILON));
    for (let i = 0; i < count; i += 4) {
      const at = <usize>i << 2;
      const wv = v128.load(w + at);
      const gv = f32x4.add(v128.load(g + at), f32x4.mul(k, wv));
      const m = f32x4.add(f32x4.mul(v128.load(s1 + at), b1), f32x4.mul(gv, nb1));
      const v = f32x4.add(f32x4.mul(v128.load(s2 + at), b2), f32x4.mul(f32x4.mul(gv, gv), nb2));
      v128.store(s1 + at, m);
      v128.store(s2 + at, v);
      const step = f32x4.mul(f32x4.div(f32x4.div(m, p1), f32x4.add(f32x4.sqrt(f32x4.div(v, p2)), eps)), lr);
      v128.store(w + at, f32x4.add(step, wv));
    }
  }
}
