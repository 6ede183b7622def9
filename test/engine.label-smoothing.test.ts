/**
 * Label smoothing in the engine: the loss and every gradient against tfjs's own smoothed losses
 * (tf.losses.softmaxCrossEntropy and tf.losses.sigmoidCrossEntropy with their labelSmoothing
 * argument, differentiated by tf.variableGrads), whole trainings against the tfjs reference trainer,
 * and the validation loss left on the true labels.
 */
import * as tf from '@tensorflow/tfjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { SharedDataset } from '../src/core/job.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { stream } from '../src/random/streams.js';
import { trainSegmentOnEngine } from '../src/trainers/engine/segment.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { trainSegment } from '../src/trainers/tfjs/loop.js';
import { disposeNetwork, forward } from '../src/trainers/tfjs/network.js';
import { irisTasks } from './helpers/datasets.js';
import { engineGradients, labelTensor, relativeError, twinNetworks } from './helpers/engine.js';

let multiclass: SharedDataset;
let binary: SharedDataset;

beforeAll(async () => {
  initBackend();
  ({ multiclass, binary } = await irisTasks('smoothing-iris'));
});
afterAll(() => tf.disposeVariables());

// Source: tfjs 4.22 (tf.losses.*CrossEntropy with labelSmoothing, tf.variableGrads) as a reference library;
// Szegedy et al., "Rethinking the Inception Architecture for Computer Vision", CVPR 2016, section 7.
const TOLERANCE = 1e-4;

describe('label smoothing: loss and gradients against tfjs\'s smoothed losses', () => {
  for (const task of ['binary', 'multiclass'] as const) {
    for (const epsilon of [0.1, 0.3]) {
      it(`${task}, epsilon ${epsilon}: the loss and every parameter's gradient within ${TOLERANCE} relative error`, () => {
        const dataset = task === 'binary' ? binary : multiclass;
        const rows = dataset.train.rows;
        const params: TrialConfiguration = { depth: 2, width: 7, activation: 'tanh', learningRate: 0.01, batchSize: rows, optimizer: 'adam', l2: 0, dropout: 0, labelSmoothing: epsilon };
        const { trial, network } = twinNetworks(params, dataset, 13, stream('label-smoothing', task, epsilon));
        try {
          trial.setUpdating(false);
          trial.setOrder(Int32Array.from({ length: rows }, (_, i) => i));
          const engineLoss = trial.step(0, rows);
          const actual = engineGradients(trial);
          const { value, grads } = tf.tidy(() => {
            const x = tf.tensor2d(dataset.train.x, [rows, dataset.inputCount]);
            const y = labelTensor(dataset, dataset.train.y);
            let loss = 0;
            const result = tf.variableGrads(() => {
              const logits = forward(network, x);
              const smoothed = task === 'binary' ? tf.losses.sigmoidCrossEntropy(y, logits, undefined, epsilon) : tf.losses.softmaxCrossEntropy(y, logits, undefined, epsilon);
              loss = smoothed.dataSync()[0]!;
              return smoothed as tf.Scalar;
            }, network.variables);
            for (const g of Object.values(result.grads)) tf.keep(g);
            return { value: loss, grads: network.variables.map((v) => result.grads[v.name]!) };
          });
          expect(Math.abs(engineLoss - value)).toBeLessThan(1e-5 * Math.max(1, Math.abs(value)));
          grads.forEach((reference, i) => expect(relativeError(actual[i]!, reference.dataSync()), network.variables[i]!.name).toBeLessThan(TOLERANCE));
          tf.dispose(grads);
        } finally {
          disposeNetwork(network);
        }
      });
    }
  }
});

describe('label smoothing in training', () => {
  const configuration: TrialConfiguration = { depth: 1, width: 8, activation: 'relu', learningRate: 0.01, batchSize: 16, optimizer: 'adam', l2: 0, dropout: 0, labelSmoothing: 0.2 };
  const EPOCHS = 12;

  it('follows the tfjs reference trainer epoch by epoch on Iris, and differs from the same trial without it', async () => {
    const request = { trialId: 3, seed: 21, configuration, dataset: multiclass, datasetId: multiclass.id, fromEpoch: 0, toEpoch: EPOCHS };
    const engine = await trainSegmentOnEngine(request);
    const reference = await trainSegment(request);
    // Tolerance: Common practice (no source), as engine.curves.test.ts: the two paths sum in different orders.
    engine.epochs.forEach((report, i) => {
      expect(Math.abs(report.trainLoss - reference.epochs[i]!.trainLoss), `epoch ${i + 1} training loss`).toBeLessThan(1e-4);
      expect(Math.abs(report.validationLoss - reference.epochs[i]!.validationLoss), `epoch ${i + 1} validation loss`).toBeLessThan(1e-4);
    });
    const { labelSmoothing: _epsilon, ...without } = configuration;
    const plain = await trainSegmentOnEngine({ ...request, configuration: without });
    expect(Math.abs(plain.epochs.at(-1)!.trainLoss - engine.epochs.at(-1)!.trainLoss)).toBeGreaterThan(1e-2);
  });

  it('trains against the smoothed targets (never below their entropy) and scores on the true labels', async () => {
    const result = await trainSegmentOnEngine({ trialId: 3, seed: 21, configuration: { ...configuration, learningRate: 0.05 }, dataset: multiclass, datasetId: multiclass.id, fromEpoch: 0, toEpoch: 30 });
    // Gibbs' inequality (Cover and Thomas, Elements of Information Theory, 2006, 2.6): cross-entropy >= the target's entropy,
    // here targets 1 - 0.2 + 0.2 / 3 and 0.2 / 3 twice.
    const high = 1 - 0.2 + 0.2 / 3;
    const low = 0.2 / 3;
    const entropy = -(high * Math.log(high) + 2 * low * Math.log(low));
    for (const report of result.epochs) expect(report.trainLoss).toBeGreaterThan(entropy - 1e-6);
    const last = result.epochs.at(-1)!;
    expect(last.trainLoss - entropy, 'the network has learnt the smoothed targets closely').toBeLessThan(0.3);
    // The validation loss is the log loss on the true labels (computed in JavaScript from the outputs).
    for (const report of result.epochs) expect(Math.abs(report.validationLoss - report.metrics.logLoss!)).toBeLessThan(1e-5);
  });
});
