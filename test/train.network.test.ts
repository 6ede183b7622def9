import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { stream } from '../src/random/streams.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { createNetwork, disposeNetwork, forward, initialKernel, initRuleFor, lossFromLogits, outputFromLogits } from '../src/trainers/tfjs/network.js';

beforeAll(() => initBackend());

const values = (t: tf.Tensor): number[] => Array.from(t.dataSync());
function std(xs: ArrayLike<number>): number {
  let mean = 0;
  for (let i = 0; i < xs.length; i++) mean += xs[i]!;
  mean /= xs.length;
  let sum = 0;
  for (let i = 0; i < xs.length; i++) sum += (xs[i]! - mean) ** 2;
  return Math.sqrt(sum / xs.length);
}

describe('output functions and losses used by the training loop', () => {
  it('sigmoid(0) is 0.5 for binary', () => {
    // Source: REFERENCES.md, loss and output functions (derived)
    tf.tidy(() => {
      expect(values(outputFromLogits('binary', tf.tensor2d([[0]])))).toEqual([0.5]);
    });
  });

  it('softmax of (2, 1, 0.1) and its cross-entropy for class 0', () => {
    // Source: REFERENCES.md: softmax (0.6590, 0.2424, 0.0986), cross-entropy with true class 0: 0.4170
    tf.tidy(() => {
      const logits = tf.tensor2d([[2, 1, 0.1]]);
      const probabilities = values(outputFromLogits('multiclass', logits));
      [0.659, 0.2424, 0.0986].forEach((p, i) => expect(probabilities[i]).toBeCloseTo(p, 4));
      expect(values(lossFromLogits('multiclass', logits, tf.tensor2d([[1, 0, 0]])))[0]).toBeCloseTo(0.417, 4);
    });
  });

  it('binary log loss from the logit of p = 0.9', () => {
    // Source: REFERENCES.md: p 0.9, y 1 -> 0.1053605; y 0 -> 2.3025851. logit(0.9) = ln 9.
    tf.tidy(() => {
      const logit = tf.tensor2d([[Math.log(9)]]);
      expect(values(lossFromLogits('binary', logit, tf.tensor2d([[1]])))[0]).toBeCloseTo(0.1053605, 5);
      expect(values(lossFromLogits('binary', logit, tf.tensor2d([[0]])))[0]).toBeCloseTo(2.3025851, 5);
    });
  });

  it('binary loss stays finite for extreme logits', () => {
    // a wrong answer with logit ±100 costs 100 (exp(100) would overflow float32)
    tf.tidy(() => {
      const loss = values(lossFromLogits('binary', tf.tensor2d([[100], [-100]]), tf.tensor2d([[0], [1]])))[0]!;
      expect(loss).toBeCloseTo(100, 3);
    });
  });

  it('regression loss is the mean squared error and the output is the logit itself', () => {
    // Source: REFERENCES.md: MSE of (1, 2, 3) against (1, 2, 5) is 4/3
    tf.tidy(() => {
      const predictions = tf.tensor2d([[1], [2], [3]]);
      expect(values(lossFromLogits('regression', predictions, tf.tensor2d([[1], [2], [5]])))[0]).toBeCloseTo(4 / 3, 6);
      expect(values(outputFromLogits('regression', predictions))).toEqual([1, 2, 3]);
    });
  });
});

describe('weight initialisation', () => {
  it('picks He normal for rectifiers, LeCun normal for selu, Glorot uniform for tanh and sigmoid', () => {
    expect(['relu', 'leakyRelu', 'elu', 'relu6', 'swish', 'softplus'].map((a) => initRuleFor(a as 'relu'))).toEqual(Array(6).fill('heNormal'));
    expect(initRuleFor('selu')).toBe('lecunNormal');
    expect(initRuleFor('tanh')).toBe('glorotUniform');
    expect(initRuleFor('sigmoid')).toBe('glorotUniform');
  });

  it('He normal with fan-in 4 has standard deviation 0.7071', () => {
    // Source: He, Zhang, Ren, Sun, ICCV 2015, section 2.2: std sqrt(2 / fan_in); fan_in 4 -> 0.7071067812 (REFERENCES.md)
    const kernel = initialKernel('heNormal', 4, 25_000, stream('test', 'he'));
    // 100 000 draws: the sample std's relative standard error is about 0.2%
    expect(std(kernel) / 0.7071067812).toBeGreaterThan(0.98);
    expect(std(kernel) / 0.7071067812).toBeLessThan(1.02);
  });

  it('Glorot uniform with fan-in 4, fan-out 16 stays within 0.5477 and has std limit / sqrt(3)', () => {
    // Source: Glorot, Bengio, AISTATS 2010: limit sqrt(6 / (fan_in + fan_out)); 4, 16 -> 0.5477225575 (REFERENCES.md)
    const limit = 0.5477225575;
    const draws = Array.from({ length: 1000 }, (_, i) => initialKernel('glorotUniform', 4, 16, stream('test', 'glorot', i))).flatMap((k) => Array.from(k));
    expect(Math.max(...draws.map(Math.abs))).toBeLessThanOrEqual(limit);
    expect(Math.max(...draws.map(Math.abs))).toBeGreaterThan(0.99 * limit);
    expect(std(draws) / (limit / Math.sqrt(3))).toBeGreaterThan(0.98);
    expect(std(draws) / (limit / Math.sqrt(3))).toBeLessThan(1.02);
  });

  it("a network's hidden kernels follow its activation's rule and the output kernel is Glorot uniform", () => {
    const network = createNetwork({ trialId: 7, seed: 3, inputCount: 300, outputCount: 50, depth: 2, width: 200, activation: 'selu' });
    try {
      expect(network.variables.map((v) => v.name)).toEqual([
        't7/dense0/kernel', 't7/dense0/bias', 't7/dense1/kernel', 't7/dense1/bias', 't7/output/kernel', 't7/output/bias',
      ]);
      // LeCun normal: std sqrt(1 / fan_in). Source: Klambauer et al., Self-Normalizing Neural Networks, NeurIPS 2017
      expect(std(network.hidden[0]!.kernel.dataSync()) / Math.sqrt(1 / 300)).toBeCloseTo(1, 1);
      expect(std(network.hidden[1]!.kernel.dataSync()) / Math.sqrt(1 / 200)).toBeCloseTo(1, 1);
      const limit = Math.sqrt(6 / (200 + 50));
      const output = Array.from(network.output.kernel.dataSync());
      expect(Math.max(...output.map(Math.abs))).toBeLessThanOrEqual(limit);
      expect(std(output) / (limit / Math.sqrt(3))).toBeCloseTo(1, 1);
      expect(values(network.hidden[0]!.bias).every((b) => b === 0)).toBe(true);
    } finally {
      disposeNetwork(network);
    }
  });

  it('the same seed gives the same weights, another seed different ones', () => {
    const spec = { trialId: 1, seed: 5, inputCount: 3, outputCount: 1, depth: 1, width: 4, activation: 'relu' as const };
    const a = createNetwork(spec);
    const first = values(a.hidden[0]!.kernel);
    disposeNetwork(a);
    const b = createNetwork(spec);
    expect(values(b.hidden[0]!.kernel)).toEqual(first);
    disposeNetwork(b);
    const c = createNetwork({ ...spec, seed: 6 });
    expect(values(c.hidden[0]!.kernel)).not.toEqual(first);
    disposeNetwork(c);
  });

  it('every activation runs forward and backward to finite gradients', () => {
    for (const activation of ['relu', 'leakyRelu', 'elu', 'selu', 'tanh', 'sigmoid', 'softplus', 'swish', 'relu6'] as const) {
      const network = createNetwork({ trialId: 2, seed: 1, inputCount: 3, outputCount: 1, depth: 2, width: 5, activation });
      const { value, grads } = tf.variableGrads(
        () => lossFromLogits('binary', forward(network, tf.tensor2d([[1, -2, 0.5], [0.1, 0.3, -1]])), tf.tensor2d([[1], [0]])),
        network.variables,
      );
      expect(Number.isFinite(value.dataSync()[0]), activation).toBe(true);
      expect(Object.keys(grads)).toHaveLength(6);
      expect(Object.values(grads).every((g) => g.dataSync().every(Number.isFinite)), activation).toBe(true);
      tf.dispose([value, ...Object.values(grads)]);
      disposeNetwork(network);
    }
  });
  it("the dense layers' hand-written gradient equals the automatic gradient of x·W + b (relative error below 1e-5)", () => {
    const network = createNetwork({ trialId: 3, seed: 4, inputCount: 6, outputCount: 3, depth: 2, width: 17, activation: 'tanh' });
    const x = tf.tensor2d(Array.from({ length: 9 * 6 }, (_, i) => Math.sin(i)), [9, 6]);
    const labels = tf.oneHot(tf.tensor1d([0, 1, 2, 0, 1, 2, 0, 1, 2], 'int32'), 3).toFloat() as tf.Tensor2D;
    // The same network written with plain ops, whose gradient tfjs derives itself.
    const plainForward = (): tf.Tensor2D => {
      let h: tf.Tensor2D = x;
      for (const layer of network.hidden) h = tf.tanh(tf.add(tf.matMul(h, layer.kernel), layer.bias)) as tf.Tensor2D;
      return tf.add(tf.matMul(h, network.output.kernel), network.output.bias) as tf.Tensor2D;
    };
    const ours = tf.variableGrads(() => lossFromLogits('multiclass', forward(network, x), labels), network.variables);
    const reference = tf.variableGrads(() => lossFromLogits('multiclass', plainForward(), labels), network.variables);
    expect(ours.value.dataSync()[0]).toBe(reference.value.dataSync()[0]); // the forward value is the same computation
    expect(Object.keys(ours.grads).sort()).toEqual(Object.keys(reference.grads).sort());
    for (const name of Object.keys(reference.grads)) {
      const got = values(ours.grads[name]!);
      const want = values(reference.grads[name]!);
      const scale = Math.max(...want.map(Math.abs));
      const worst = Math.max(...got.map((g, i) => Math.abs(g - want[i]!)));
      expect(worst / scale, name).toBeLessThan(1e-5);
    }
    tf.dispose([x, labels, ours.value, reference.value, ...Object.values(ours.grads), ...Object.values(reference.grads)]);
    disposeNetwork(network);
  });
});
