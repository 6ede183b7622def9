import * as tf from '@tensorflow/tfjs';
import { mkdtemp, readFile, readdir, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CheckpointManifest } from '../src/train/checkpoint.js';
import { readCheckpointWeights } from '../src/train/checkpoint.js';
import { initBackend } from '../src/train/backend.js';
import { trainSegment } from '../src/train/loop.js';
import { syntheticDataset, trainRequest } from './helpers/synthetic.js';

let root: string;
beforeAll(async () => {
  await initBackend();
  root = await mkdtemp(join(tmpdir(), 'rungwise-train-checkpoint-'));
});
afterAll(() => rm(root, { recursive: true, force: true }));

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
      const straightDir = join(root, `${optimizer}-straight`);
      const splitDir = join(root, `${optimizer}-at-3`);
      const resumedDir = join(root, `${optimizer}-resumed`);

      const straight = await trainSegment(trainRequest(dataset, { toEpoch: 9, checkpointOut: straightDir, params }));
      await trainSegment(trainRequest(dataset, { toEpoch: 3, checkpointOut: splitDir, params }));
      const resumed = await trainSegment(trainRequest(dataset, { fromEpoch: 3, toEpoch: 9, checkpointIn: splitDir, checkpointOut: resumedDir, params }));

      expect(resumed.epochs.map((e) => e.epoch)).toEqual([4, 5, 6, 7, 8, 9]);
      straight.epochs.slice(3).forEach((expected, i) => {
        expect(Math.abs(resumed.epochs[i]!.trainLoss - expected.trainLoss)).toBeLessThan(1e-6);
        expect(Math.abs(resumed.epochs[i]!.validationLoss - expected.validationLoss)).toBeLessThan(1e-6);
      });
      const a = await readCheckpointWeights(straightDir);
      const b = await readCheckpointWeights(resumedDir);
      expect(b.map((w) => w.name)).toEqual(a.map((w) => w.name));
      a.forEach((weights, i) => expect(maxDifference(weights.values, b[i]!.values)).toBeLessThan(1e-6));
      expect(resumed.tensorsAfter).toBe(resumed.tensorsBefore);
    });
  }

  it('writes a manifest naming every variable, the optimizer slots and the iteration count', async () => {
    const dir = join(root, 'manifest');
    await trainSegment(trainRequest(dataset, { trialId: 12, toEpoch: 2, checkpointOut: dir, params: { depth: 1, width: 5, optimizer: 'adam' } }));
    const manifest = JSON.parse(await readFile(join(dir, 'checkpoint.json'), 'utf8')) as CheckpointManifest;
    expect(manifest.formatVersion).toBe(1);
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
    // weights.bin: (20 + 5 + 15 + 3) network floats, twice that for m and v, and two beta powers
    const bytes = await readFile(join(dir, 'weights.bin'));
    expect(bytes.length).toBe(4 * (43 * 3 + 2));
    const weights = await readCheckpointWeights(dir);
    expect(weights.map((w) => [w.name, w.values.length])).toEqual([
      ['t12/dense0/kernel', 20], ['t12/dense0/bias', 5], ['t12/output/kernel', 15], ['t12/output/bias', 3],
    ]);
  });

  it('replaces an existing checkpoint and leaves no temporary directory behind', async () => {
    const dir = join(root, 'replace');
    await trainSegment(trainRequest(dataset, { toEpoch: 1, checkpointOut: dir }));
    await trainSegment(trainRequest(dataset, { toEpoch: 2, checkpointOut: dir }));
    const manifest = JSON.parse(await readFile(join(dir, 'checkpoint.json'), 'utf8')) as CheckpointManifest;
    expect(manifest.epoch).toBe(2);
    expect((await readdir(root)).filter((name) => name.startsWith('replace'))).toEqual(['replace']);
  });

  it('refuses a checkpoint that stands at another epoch, without leaking tensors', async () => {
    const dir = join(root, 'epoch-2');
    await trainSegment(trainRequest(dataset, { toEpoch: 2, checkpointOut: dir }));
    const before = tf.memory().numTensors;
    await expect(trainSegment(trainRequest(dataset, { fromEpoch: 3, toEpoch: 4, checkpointIn: dir }))).rejects.toThrow(
      /holds trial 1 at epoch 2 \(adam\), expected trial 1 at epoch 3 \(adam\)/,
    );
    expect(tf.memory().numTensors).toBe(before);
  });
});
