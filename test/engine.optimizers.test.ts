/**
 * The engine's optimizer steps against the published update rules, worked by hand in double
 * precision over two steps: the gradient at each point is read back from a gradient-only step
 * (itself checked against tfjs in engine.gradients.test.ts), the update is then applied by the engine.
 */
import { describe, expect, it } from 'vitest';
import { networkWeights } from '../src/trainers/engine/checkpoint-state.js';
import { EngineTrial } from '../src/trainers/engine/trial.js';
import { ADAM, MOMENTUM } from '../src/trainers/shared/optimizer-constants.js';
import type { OptimizerName } from '../src/core/configuration.js';
import { engineGradients, relativeError } from './helpers/engine.js';
import { baseParams, syntheticDataset } from './helpers/synthetic.js';

const dataset = syntheticDataset({ task: 'regression', rows: 40, inputs: 3, seed: 6 });
const rows = dataset.train.rows;
const learningRate = 0.05;

function trialFor(optimizer: OptimizerName, l2 = 0): EngineTrial {
  const trial = EngineTrial.create({ trialId: 1, seed: 3, configuration: { ...baseParams, depth: 1, width: 5, optimizer, learningRate, l2, batchSize: rows }, dataset });
  trial.setOrder(Int32Array.from({ length: rows }, (_, i) => i));
  return trial;
}

/** The gradient at the trial's current weights (no update), then one real step. */
function gradientThenStep(trial: EngineTrial): Float32Array[] {
  trial.setUpdating(false);
  trial.step(0, rows);
  const gradients = engineGradients(trial).map((g) => g.slice());
  trial.setUpdating(true);
  trial.step(0, rows);
  return gradients;
}

const weightsOf = (trial: EngineTrial): Float64Array[] => networkWeights(trial).map((w) => Float64Array.from(w.values));

describe('engine optimizer steps, two steps worked by hand', () => {
  it('sgd: w <- w - lr * g, the L2 term 2 * l2 * w included in g', () => {
    const l2 = 0.01;
    const trial = trialFor('sgd', l2);
    let expected = weightsOf(trial);
    for (let step = 0; step < 2; step++) {
      const g = gradientThenStep(trial); // gradient-only steps include the L2 term already
      expected = expected.map((w, i) => w.map((value, j) => value - learningRate * g[i]![j]!));
      networkWeights(trial).forEach((w, i) => expect(relativeError(w.values, expected[i]!)).toBeLessThan(1e-6));
    }
  });

  it('momentum (classical heavy ball, 0.9): v <- 0.9 v + g, w <- w - lr * v', () => {
    // Source: Polyak, "Some methods of speeding up the convergence of iteration methods", 1964; the form tf.train.momentum uses (tfjs 4.22).
    const trial = trialFor('momentum');
    let w = weightsOf(trial);
    let v = w.map((p) => new Float64Array(p.length));
    for (let step = 0; step < 2; step++) {
      const g = gradientThenStep(trial);
      v = v.map((vi, i) => vi.map((value, j) => MOMENTUM * value + g[i]![j]!));
      w = w.map((wi, i) => wi.map((value, j) => value - learningRate * v[i]![j]!));
      networkWeights(trial).forEach((actual, i) => expect(relativeError(actual.values, w[i]!)).toBeLessThan(1e-6));
    }
  });

  it('Adam: bias-corrected moments, w <- w - lr * m_hat / (sqrt(v_hat) + eps)', () => {
    // Source: Kingma, Ba, "Adam: A Method for Stochastic Optimization", ICLR 2015, Algorithm 1 (beta1 0.9, beta2 0.999, eps 1e-8).
    const { beta1, beta2, epsilon } = ADAM;
    const trial = trialFor('adam');
    let w = weightsOf(trial);
    let m = w.map((p) => new Float64Array(p.length));
    let v = w.map((p) => new Float64Array(p.length));
    const first = networkWeights(trial).map((p) => p.values.slice());
    for (let t = 1; t <= 2; t++) {
      const g = gradientThenStep(trial);
      m = m.map((mi, i) => mi.map((value, j) => beta1 * value + (1 - beta1) * g[i]![j]!));
      v = v.map((vi, i) => vi.map((value, j) => beta2 * value + (1 - beta2) * g[i]![j]! ** 2));
      w = w.map((wi, i) =>
        wi.map((value, j) => value - (learningRate * (m[i]![j]! / (1 - beta1 ** t))) / (Math.sqrt(v[i]![j]! / (1 - beta2 ** t)) + epsilon)),
      );
      const actual = networkWeights(trial);
      actual.forEach((a, i) => expect(relativeError(a.values, w[i]!)).toBeLessThan(1e-5));
      if (t === 1) {
        // Section 2.1: the first step moves every parameter with a non-zero gradient by about lr.
        actual.forEach((a, i) =>
          a.values.forEach((value, j) => {
            if (Math.abs(g[i]![j]!) > 1e-6) expect(Math.abs(value - first[i]![j]!)).toBeCloseTo(learningRate, 4);
          }),
        );
      }
    }
    expect(trial.constant('power1')).toBeCloseTo(beta1 ** 3, 6);
    expect(trial.constant('power2')).toBeCloseTo(beta2 ** 3, 6);
  });
});
