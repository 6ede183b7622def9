import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { checkpointManifest, checkpointWeights, decodeCheckpoint } from '../src/checkpoints/format.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { trainSegment } from '../src/trainers/tfjs/loop.js';
import { syntheticDataset, trainRequest } from './helpers/synthetic.js';

beforeAll(async () => {
  await initBackend();
});

// 150 training rows in batches of 32: 5 batches (the last one short) per epoch.
const dataset = syntheticDataset({ task: 'multiclass', rows: 200, inputs: 4, classes: 3 });

function maxDifference(a: Float32Array, b: Float32Array): number {
  let max = 0;
  for (let i = 0; i < a.length; i++) max = Math.max(max, Math.abs(a[i]! - b[i]!));
  return max;
}

describe('checkpoints', () => {
  for (const optimizer of ['sgd', 'momentum', 'adam'] as const) {
    it(`continuing from a checkpoint at epoch 3 matches training 1..9 straight (${optimizer})`, async () => {
      const params = { optimizer, learningRate: 0.05, dropout: 0.2, l2: 1e-4 };
      const straight = await trainSegment(trainRequest(dataset, { toEpoch: 9, params }));
      const atThree = await trainSegment(trainRequest(dataset, { toEpoch: 3, params }));
      const resumed = await trainSegment(trainRequest(dataset, { fromEpoch: 3, toEpoch: 9, checkpoint: atThree.checkpoint!, params }));

      expect(resumed.epochs.map((e) => e.epoch)).toEqual([4, 5, 6, 7, 8, 9]);
      straight.epochs.slice(3).forEach((expected, i) => {
        expect(Math.abs(resumed.epochs[i]!.trainLoss - expected.trainLoss)).toBeLessThan(1e-6);
        expect(Math.abs(resumed.epochs[i]!.validationLoss - expected.validationLoss)).toBeLessThan(1e-6);
      });
      const a = checkpointWeights(straight.checkpoint!);
      const b = checkpointWeights(resumed.checkpoint!);
      expect(b.map((w) => w.name)).toEqual(a.map((w) => w.name));
      a.forEach((weights, i) => expect(maxDifference(weights.values, b[i]!.values)).toBeLessThan(1e-6));
      expect(resumed.tensorsAfter).toBe(resumed.tensorsBefore);
    });
  }

  it('returns a checkpoint whose manifest names every variable, the optimizer slots and the iteration count', async () => {
    const result = await trainSegment(trainRequest(dataset, { trialId: 12, toEpoch: 2, params: { depth: 1, width: 5, optimizer: 'adam' } }));
    const bytes = result.checkpoint!;
    const manifest = checkpointManifest(bytes);
    expect(manifest.formatVersion).toBe(2);
    expect(manifest.trialId).toBe(12);
    expect(manifest.epoch).toBe(2);
    expect(manifest.variables).toEqual([
      { name: 't12/dense0/kernel', shape: [4, 5] },
      { name: 't12/dense0/bias', shape: [5] },
      { name: 't12/output/kernel', shape: [5, 3] },
      { name: 't12/output/bias', shape: [3] },
    ]);
    expect(manifest.optimizer.name).toBe('adam');
    expect(manifest.optimizer.iterations).toBe(2 * 5); // 2 epochs of 5 batches
    expect(manifest.optimizer.variables.map((v) => v.name)).toEqual([
      't12/dense0/kernel/m', 't12/dense0/bias/m', 't12/output/kernel/m', 't12/output/bias/m',
      't12/dense0/kernel/v', 't12/dense0/bias/v', 't12/output/kernel/v', 't12/output/bias/v',
      'adam/accBeta1', 'adam/accBeta2',
    ]);
    // (20 + 5 + 15 + 3) network floats, twice that for m and v, and two beta powers
    const { network, optimizer } = decodeCheckpoint(bytes);
    expect([...network, ...optimizer].reduce((sum, w) => sum + w.values.length, 0)).toBe(43 * 3 + 2);
    const weights = checkpointWeights(bytes);
    expect(weights.map((w) => [w.name, w.values.length])).toEqual([
      ['t12/dense0/kernel', 20], ['t12/dense0/bias', 5], ['t12/output/kernel', 15], ['t12/output/bias', 3],
    ]);
  });

  it('refuses bytes that are cut short', async () => {
    const bytes = (await trainSegment(trainRequest(dataset, { toEpoch: 1 }))).checkpoint!;
    expect(() => decodeCheckpoint(bytes.subarray(0, bytes.length - 4))).toThrow(/shorter than its manifest says/);
    expect(() => decodeCheckpoint(new Uint8Array([1, 2, 3, 4, 5, 6, 7, 8]))).toThrow(/not a rungwise checkpoint/);
  });

  it('refuses a checkpoint that stands at another epoch, without leaking tensors', async () => {
    const atTwo = (await trainSegment(trainRequest(dataset, { toEpoch: 2 }))).checkpoint!;
    const before = tf.memory().numTensors;
    await expect(trainSegment(trainRequest(dataset, { fromEpoch: 3, toEpoch: 4, checkpoint: atTwo }))).rejects.toThrow(
      /holds trial 1 at epoch 2 \(adam\), expected trial 1 at epoch 3 \(adam\)/,
    );
    expect(tf.memory().numTensors).toBe(before);
  });
});
