import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { ConstantCachingAdam } from '../src/trainers/tfjs/adam.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { ADAM } from '../src/trainers/tfjs/loop.js';

beforeAll(() => initBackend());

/** Runs `steps` minimisation steps of a small least-squares problem and returns the final weights. */
function train(optimizer: tf.Optimizer, steps: number, tag: string): number[] {
  const w = tf.tidy(() => tf.variable(tf.tensor2d([[0.3, -0.2], [0.1, 0.4], [-0.5, 0.2]]), true, `adam-test/${tag}/w`));
  const b = tf.tidy(() => tf.variable(tf.tensor1d([0.05, -0.05]), true, `adam-test/${tag}/b`));
  const x = tf.tensor2d([[1, 2, 3], [0.5, -1, 2], [-2, 0.3, 1], [1.5, 1, -0.5]]);
  const y = tf.tensor2d([[1, 0], [0, 1], [1, 1], [0, 0]]);
  for (let i = 0; i < steps; i++) {
    tf.tidy(() => {
      optimizer.minimize(() => tf.mean(tf.square(tf.sub(tf.add(tf.matMul(x, w), b), y))) as tf.Scalar, false, [w, b]);
    });
  }
  const weights = [...w.dataSync(), ...b.dataSync()];
  tf.dispose([w, b, x, y]);
  return weights;
}

describe('ConstantCachingAdam', () => {
  it("gives bitwise the same weights as tfjs's Adam after 7 steps", () => {
    const stock = tf.train.adam(0.05, ADAM.beta1, ADAM.beta2, ADAM.epsilon);
    const cached = new ConstantCachingAdam(0.05, ADAM.beta1, ADAM.beta2, ADAM.epsilon);
    const expected = train(stock, 7, 'stock');
    const got = train(cached, 7, 'cached');
    expect(got).toStrictEqual(expected);
    expect(got).not.toStrictEqual(train(tf.train.adam(0.05, ADAM.beta1, ADAM.beta2, ADAM.epsilon), 6, 'six')); // the steps did change them
    stock.dispose();
    cached.dispose();
  });

  it('holds the same slot weights as the stock optimizer, so checkpoints read and write them unchanged', async () => {
    const stock = tf.train.adam(0.05, ADAM.beta1, ADAM.beta2, ADAM.epsilon);
    const cached = new ConstantCachingAdam(0.05, ADAM.beta1, ADAM.beta2, ADAM.epsilon);
    train(stock, 3, 'slots-stock');
    train(cached, 3, 'slots-cached');
    const stockWeights = await stock.getWeights();
    const cachedWeights = await cached.getWeights();
    expect(cachedWeights.map((w) => w.name.replace('slots-cached', 'x'))).toEqual(stockWeights.map((w) => w.name.replace('slots-stock', 'x')));
    expect(cachedWeights.map((w) => Array.from(w.tensor.dataSync()))).toEqual(stockWeights.map((w) => Array.from(w.tensor.dataSync())));
    stock.dispose();
    cached.dispose();
  });

  it('releases its constants and slots on dispose', () => {
    const before = tf.memory().numTensors;
    const cached = new ConstantCachingAdam(0.05, ADAM.beta1, ADAM.beta2, ADAM.epsilon);
    train(cached, 2, 'dispose');
    cached.dispose();
    expect(tf.memory().numTensors).toBe(before);
  });
});
