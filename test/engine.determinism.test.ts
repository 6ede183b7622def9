/** The engine gives bitwise-identical results run to run and across a checkpoint, and continues tfjs checkpoints. */
import { beforeAll, describe, expect, it } from 'vitest';
import { decodeCheckpoint } from '../src/checkpoints/format.js';
import { trainSegmentOnEngine } from '../src/trainers/engine/segment.js';
import type { EpochReport } from '../src/core/job.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { trainSegment } from '../src/trainers/tfjs/loop.js';
import { OPTIMIZERS } from '../src/core/configuration.js';
import { syntheticDataset, trainRequest } from './helpers/synthetic.js';

const figures = (reports: EpochReport[]) => reports.map(({ seconds: _, ...rest }) => rest);
const multiclass = syntheticDataset({ task: 'multiclass', rows: 260, inputs: 5, classes: 3, seed: 3 });

beforeAll(() => initBackend());

describe('engine determinism', () => {
  it('the same request twice gives bitwise-identical epoch figures and checkpoints, with dropout and L2 too', async () => {
    const request = trainRequest(multiclass, { toEpoch: 4, params: { dropout: 0.3, l2: 1e-3, optimizer: 'momentum', batchSize: 20 } });
    const first = await trainSegmentOnEngine(request);
    const second = await trainSegmentOnEngine(request);
    expect(first.status).toBe('completed');
    expect(figures(second.epochs)).toStrictEqual(figures(first.epochs));
    expect(second.checkpoint).toStrictEqual(first.checkpoint);
  });

  for (const optimizer of OPTIMIZERS) {
    it(`${optimizer}: 10 epochs straight equal 5 epochs, a checkpoint and 5 more, bit for bit`, async () => {
      const params = { optimizer, dropout: 0.2, l2: 1e-4, activation: 'elu' as const };
      const straight = await trainSegmentOnEngine(trainRequest(multiclass, { toEpoch: 10, params }));
      const firstHalf = await trainSegmentOnEngine(trainRequest(multiclass, { toEpoch: 5, params }));
      const secondHalf = await trainSegmentOnEngine(trainRequest(multiclass, { fromEpoch: 5, toEpoch: 10, params, checkpoint: firstHalf.checkpoint! }));
      expect(figures([...firstHalf.epochs, ...secondHalf.epochs])).toStrictEqual(figures(straight.epochs));
      expect(secondHalf.checkpoint).toStrictEqual(straight.checkpoint);
    });
  }

  it('writes checkpoints in the format the tfjs path writes: the same manifest, variable names, shapes and slots', async () => {
    const params = { optimizer: 'adam' as const, depth: 2, width: 6 };
    const engine = decodeCheckpoint((await trainSegmentOnEngine(trainRequest(multiclass, { toEpoch: 2, params }))).checkpoint!);
    const reference = decodeCheckpoint((await trainSegment(trainRequest(multiclass, { toEpoch: 2, params }))).checkpoint!);
    expect(engine.manifest).toStrictEqual(reference.manifest);
    expect(engine.optimizer.map((w) => [w.name, w.shape])).toStrictEqual(reference.optimizer.map((w) => [w.name, w.shape]));
  });

  it('continues a checkpoint the tfjs path wrote', async () => {
    const params = { optimizer: 'momentum' as const };
    const from = (await trainSegment(trainRequest(multiclass, { toEpoch: 3, params }))).checkpoint!;
    const continued = await trainSegmentOnEngine(trainRequest(multiclass, { fromEpoch: 3, toEpoch: 5, params, checkpoint: from }));
    const reference = await trainSegment(trainRequest(multiclass, { fromEpoch: 3, toEpoch: 5, params, checkpoint: from }));
    expect(continued.epochs.map((e) => e.epoch)).toEqual([4, 5]);
    continued.epochs.forEach((report, i) => expect(report.trainLoss).toBeCloseTo(reference.epochs[i]!.trainLoss, 4));
  });

  it('refuses a checkpoint of another trial or epoch', async () => {
    const from = (await trainSegmentOnEngine(trainRequest(multiclass, { toEpoch: 2 }))).checkpoint!;
    await expect(trainSegmentOnEngine(trainRequest(multiclass, { fromEpoch: 3, toEpoch: 4, checkpoint: from }))).rejects.toThrow(/holds trial 1 at epoch 2/);
  });

  it('ends as diverged with the epoch recorded and no checkpoint when the loss stops being finite', async () => {
    const regression = syntheticDataset({ task: 'regression' });
    const result = await trainSegmentOnEngine(trainRequest(regression, { toEpoch: 5, params: { optimizer: 'sgd', learningRate: 1e6 } }));
    expect(result.status).toBe('diverged');
    expect(result.divergence?.reason).toMatch(/loss (became (NaN|Infinity|-Infinity)|ran away to .*) at epoch \d+/);
    expect(result.epochs.map((e) => e.epoch)).toEqual(Array.from({ length: result.divergence!.epoch - 1 }, (_, i) => i + 1));
    expect(result.checkpoint).toBeUndefined();
  });
});
