import * as tf from '@tensorflow/tfjs';
import { MessageChannel } from 'node:worker_threads';
import { beforeAll, describe, expect, it } from 'vitest';
import type { EpochReport } from '../src/core/job.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { datasetTensors } from '../src/trainers/tfjs/data-cache.js';
import { trainSegment } from '../src/trainers/tfjs/loop.js';
import trialThread from '../threads/trial-thread.js';
import { createNetwork, disposeNetwork, forward, lossFromLogits, networkSpec } from '../src/trainers/tfjs/network.js';
import { syntheticDataset, trainRequest } from './helpers/synthetic.js';

beforeAll(() => initBackend());

const binary = syntheticDataset({ task: 'binary' });
const multiclass = syntheticDataset({ task: 'multiclass', classes: 3, inputs: 5 });
const regression = syntheticDataset({ task: 'regression' });

/** Epoch reports without the wall time, the one field allowed to differ between runs. */
const figures = (reports: EpochReport[]) => reports.map(({ seconds: _, ...rest }) => rest);

describe('trainSegment', () => {
  it('reports every epoch with the task metrics', async () => {
    const seen: number[] = [];
    const result = await trainSegment(trainRequest(binary, { toEpoch: 3 }), (r) => seen.push(r.epoch));
    expect(result.status).toBe('completed');
    expect(seen).toEqual([1, 2, 3]);
    expect(result.epochs.map((e) => e.epoch)).toEqual([1, 2, 3]);
    expect(Object.keys(result.epochs[0]!.metrics).sort()).toEqual(['accuracy', 'auc', 'logLoss', 'macroF1']);
    const regressionResult = await trainSegment(trainRequest(regression, { toEpoch: 1 }));
    expect(Object.keys(regressionResult.epochs[0]!.metrics).sort()).toEqual(['mae', 'r2', 'rmse']);
  });

  it('the same request twice gives bitwise-identical epoch figures, with dropout and L2 too', async () => {
    const request = trainRequest(multiclass, { toEpoch: 3, params: { dropout: 0.3, l2: 1e-3, optimizer: 'momentum' } });
    const first = await trainSegment(request);
    const second = await trainSegment(request);
    expect(figures(second.epochs)).toStrictEqual(figures(first.epochs));
  });

  it('a different seed gives different figures', async () => {
    const first = await trainSegment(trainRequest(binary, { seed: 1 }));
    const second = await trainSegment(trainRequest(binary, { seed: 2 }));
    expect(second.epochs.map((e) => e.trainLoss)).not.toEqual(first.epochs.map((e) => e.trainLoss));
  });

  it('returns the tensor count to its baseline after trials of different shapes and optimizers', async () => {
    for (const dataset of [binary, multiclass, regression]) datasetTensors(dataset); // fill the cache first
    const baseline = tf.memory().numTensors;
    const results = [
      await trainSegment(trainRequest(binary, { params: { optimizer: 'adam', depth: 3, width: 6 } })),
      await trainSegment(trainRequest(multiclass, { trialId: 2, params: { optimizer: 'momentum', dropout: 0.5, activation: 'swish' } })),
      await trainSegment(trainRequest(regression, { trialId: 3, params: { optimizer: 'sgd', l2: 0.01, depth: 1, activation: 'selu' } })),
      await trainSegment(trainRequest(regression, { trialId: 4, params: { optimizer: 'sgd', learningRate: 1e6 } })),
    ];
    for (const result of results) expect(result.tensorsAfter).toBe(result.tensorsBefore);
    expect(tf.memory().numTensors).toBe(baseline);
  });

  it('ends as diverged with the epoch recorded when the loss stops being finite', async () => {
    const result = await trainSegment(trainRequest(regression, { toEpoch: 5, params: { optimizer: 'sgd', learningRate: 1e6 } }));
    expect(result.status).toBe('diverged');
    expect(result.divergence?.reason).toMatch(/loss became (NaN|Infinity) at epoch \d+$/);
    const epoch = result.divergence!.epoch;
    expect(epoch).toBeGreaterThanOrEqual(1);
    expect(epoch).toBeLessThanOrEqual(5);
    // the diverged epoch has no report; the ones before it do
    expect(result.epochs.map((e) => e.epoch)).toEqual(Array.from({ length: epoch - 1 }, (_, i) => i + 1));
    expect(result.tensorsAfter).toBe(result.tensorsBefore);
  });

  it('learns a separable binary problem: validation accuracy above 0.9 after 20 epochs', async () => {
    const separable = syntheticDataset({ task: 'binary', rows: 400, seed: 2 });
    const result = await trainSegment(trainRequest(separable, { toEpoch: 20, params: { width: 16 } }));
    const last = result.epochs.at(-1)!;
    expect(last.metrics.accuracy).toBeGreaterThan(0.9);
    expect(last.trainLoss).toBeLessThan(result.epochs[0]!.trainLoss);
  });

  it('posts each epoch report on the progress port (through the thread entry)', async () => {
    const channel = new MessageChannel();
    const received: EpochReport[] = [];
    const allThree = new Promise<void>((resolve) => {
      channel.port2.on('message', (report: EpochReport) => {
        received.push(report);
        if (received.length === 3) resolve();
      });
    });
    const result = await trialThread(trainRequest(binary, { toEpoch: 3, trainer: 'tfjs', progressPort: channel.port1 }));
    await allThree;
    channel.port1.close();
    expect(received).toEqual(result.epochs);
  });

  it('rejects a continuation without a checkpoint', async () => {
    await expect(trainSegment(trainRequest(binary, { fromEpoch: 2, toEpoch: 3 }))).rejects.toThrow(/fromEpoch is 2 but no checkpoint was given/);
  });
  it("with one batch per epoch, epoch 1's training loss is the initial network's loss on every training row", async () => {
    const rows = multiclass.train.rows;
    const request = trainRequest(multiclass, { toEpoch: 1, params: { batchSize: rows } });
    const result = await trainSegment(request);
    const { configuration: params, dataset, seed, trialId } = request;
    const network = createNetwork(networkSpec(trialId, seed, params, dataset.inputCount, dataset.outputCount));
    const data = datasetTensors(dataset);
    const initialLoss = tf.tidy(() => lossFromLogits('multiclass', forward(network, data.trainX), data.trainY).dataSync()[0]!);
    disposeNetwork(network);
    // The epoch's shuffle changes only the order the rows are summed in.
    expect(result.epochs[0]!.trainLoss).toBeCloseTo(initialLoss, 6);
  });
});
