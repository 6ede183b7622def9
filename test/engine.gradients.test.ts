/**
 * The engine's gradients of every parameter against tfjs's automatic differentiation of the tfjs
 * path's own network, loss and L2 penalty (src/trainers/tfjs/network.ts), for every activation, every
 * output/loss pair, with and without L2, on small random networks whose widths need padding.
 */
import * as tf from '@tensorflow/tfjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ACTIVATIONS, TASKS } from '../src/core/configuration.js';
import { stream } from '../src/random/streams.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { disposeNetwork, forward, l2Penalty, lossFromLogits } from '../src/trainers/tfjs/network.js';
import { engineGradients, labelTensor, relativeError, twinNetworks } from './helpers/engine.js';
import { baseParams, syntheticDataset } from './helpers/synthetic.js';

beforeAll(() => initBackend());
afterAll(() => tf.disposeVariables());

// Source: tfjs 4.22 (tf.variableGrads) as a general-purpose reference library.
const TOLERANCE = 1e-4;

describe('engine gradients against tf.variableGrads', () => {
  for (const task of TASKS) {
    // 38 training rows (not a multiple of 4), 5 inputs, 3 classes: every kernel has padded rows or columns.
    const dataset = syntheticDataset({ task, rows: 50, inputs: 5, classes: 3, seed: 4, validationFraction: 0.25 });
    for (const activation of ACTIVATIONS) {
      for (const l2 of [0, 0.01]) {
        it(`${task}, ${activation}, ${l2 > 0 ? 'with' : 'without'} L2: every parameter's gradient within ${TOLERANCE} relative error`, () => {
          const rows = dataset.train.rows;
          const params = { ...baseParams, depth: 2, width: 10, activation, l2, batchSize: rows };
          const { trial, network } = twinNetworks(params, dataset, 11, stream('engine-gradients', task, activation, l2));
          try {
            trial.setUpdating(false);
            trial.setOrder(Int32Array.from({ length: rows }, (_, i) => i));
            const engineLoss = trial.step(0, rows);
            const actual = engineGradients(trial);

            const { value, grads } = tf.tidy(() => {
              const x = tf.tensor2d(dataset.train.x, [rows, dataset.inputCount]);
              const y = labelTensor(dataset, dataset.train.y);
              let dataLoss = 0;
              const result = tf.variableGrads(() => {
                const loss = lossFromLogits(task, forward(network, x), y);
                dataLoss = loss.dataSync()[0]!;
                return l2 > 0 ? (tf.add(loss, l2Penalty(network, l2)) as tf.Scalar) : loss;
              }, network.variables);
              for (const g of Object.values(result.grads)) tf.keep(g);
              return { value: dataLoss, grads: network.variables.map((v) => result.grads[v.name]!) };
            });
            expect(Math.abs(engineLoss - value)).toBeLessThan(1e-5 * Math.max(1, Math.abs(value)));
            grads.forEach((reference, i) => {
              expect(relativeError(actual[i]!, reference.dataSync()), network.variables[i]!.name).toBeLessThan(TOLERANCE);
            });
            tf.dispose(grads);
          } finally {
            disposeNetwork(network);
          }
        });
      }
    }
  }
});
