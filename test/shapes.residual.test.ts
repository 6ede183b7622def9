/**
 * Residual blocks with layer normalisation (`block: residual`): the tfjs path's normalisation against
 * tfjs's own LayerNormalization layer, the engine's loss and every gradient (gains and biases of
 * the normalisations included) against tfjs's automatic differentiation of the tfjs path's network,
 * training against the tfjs path and across a checkpoint, and the exported tfjs and ONNX models.
 */
import * as tf from '@tensorflow/tfjs';
import * as ort from 'onnxruntime-node';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { TASKS, type TrialConfiguration } from '../src/core/configuration.js';
import { weightCount } from '../src/core/size.js';
import { networkTrainingBytes, trainingBytes } from '../src/study/capacity.js';
import { stream } from '../src/random/streams.js';
import { networkWeights } from '../src/trainers/engine/checkpoint-state.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { disposeNetwork, forward, l2Penalty, layerNorm, lossFromLogits, outputFromLogits } from '../src/trainers/tfjs/network.js';
import { trainSegment } from '../src/trainers/tfjs/loop.js';
import { trainSegmentOnEngine } from '../src/trainers/engine/segment.js';
import type { PreprocessingRecipe } from '../src/data/types.js';
import type { ExportConfiguration } from '../src/export/configuration.js';
import { buildLayersModel, predictRows } from '../src/export/model-files.js';
import { onnxModelBytes } from '../src/export/onnx.js';
import { NORM_EPSILON } from '../src/trainers/shared/layer-plan.js';
import { labelTensor, relativeError, residualGradients, twinNetworks } from './helpers/engine.js';
import { baseParams, syntheticDataset } from './helpers/synthetic.js';

beforeAll(() => initBackend());
afterAll(() => tf.disposeVariables());

describe('layer normalisation of the tfjs path', () => {
  it('computes what tf.layers.layerNormalization computes (within 1e-5)', () => {
    // Source: tfjs 4.22, tf.layers.layerNormalization (axis -1, gamma and beta), as a reference library.
    const rng = stream('layer-norm-reference');
    const x = tf.tensor2d(Float32Array.from({ length: 6 * 7 }, () => 4 * rng() - 1), [6, 7]);
    const gain = tf.tensor1d(Float32Array.from({ length: 7 }, () => 0.5 + rng()));
    const bias = tf.tensor1d(Float32Array.from({ length: 7 }, () => rng() - 0.5));
    const layer = tf.layers.layerNormalization({ axis: -1, epsilon: NORM_EPSILON });
    layer.build([null, 7]);
    layer.setWeights([gain, bias]);
    const expected = (layer.apply(x) as tf.Tensor).dataSync();
    const actual = layerNorm(x, gain, bias).dataSync();
    expect(relativeError(actual, expected)).toBeLessThan(1e-5);
    tf.dispose([x, gain, bias]);
  });
});

// Source: tfjs 4.22 (tf.variableGrads) as a general-purpose reference library.
const TOLERANCE = 1e-4;

const cases: { name: string; params: Partial<TrialConfiguration> }[] = [
  { name: 'relu, 2 blocks of width 10, with L2', params: { activation: 'relu', depth: 2, width: 10, l2: 0.01 } },
  { name: 'tanh, 3 funnel blocks of width 13 (inner 13, 7, 4), dropout 0.3', params: { activation: 'tanh', depth: 3, width: 13, shape: 'funnel', dropout: 0.3 } },
  { name: 'selu, 1 block of width 6', params: { activation: 'selu', depth: 1, width: 6 } },
];

describe('engine gradients of residual blocks against tf.variableGrads', () => {
  for (const task of TASKS) {
    const dataset = syntheticDataset({ task, rows: 50, inputs: 5, classes: 3, seed: 8, validationFraction: 0.25 });
    for (const { name, params: overrides } of cases) {
      it(`${task}, ${name}: the loss and every parameter's gradient within ${TOLERANCE} relative error`, () => {
        const rows = dataset.train.rows;
        const params: TrialConfiguration = { ...baseParams, ...overrides, block: 'residual', batchSize: rows };
        const { trial, network } = twinNetworks(params, dataset, 21, stream('residual-gradients', task, name));
        try {
          // Gains away from 1 and norm biases away from 0, so that their paths are exercised.
          const rng = stream('residual-gains', task, name);
          for (const layer of trial.layers.filter((l) => l.plan.norm)) {
            trial.writeMatrix(layer.at.normGain, layer.inStride, Float32Array.from({ length: layer.fanIn }, () => 0.5 + rng()), layer.fanIn);
            trial.writeMatrix(layer.at.normBias, layer.inStride, Float32Array.from({ length: layer.fanIn }, () => rng() - 0.5), layer.fanIn);
          }
          networkWeights(trial).forEach((weights, i) => {
            expect(weights.name).toBe(network.variables[i]!.name);
            network.variables[i]!.assign(tf.tensor(weights.values, weights.shape));
          });
          expect(network.variables.reduce((sum, v) => sum + v.size, 0)).toBe(weightCount(params, dataset.inputCount, dataset.outputCount));

          trial.setUpdating(false);
          trial.setOrder(Int32Array.from({ length: rows }, (_, i) => i));
          if (params.dropout > 0) trial.drawMasks(stream('residual-masks', task, name), rows);
          const engineLoss = trial.step(0, rows);
          const actual = residualGradients(trial);

          const dropout = params.dropout > 0 ? { rate: params.dropout, rng: stream('residual-masks', task, name) } : undefined;
          const { value, grads } = tf.tidy(() => {
            const x = tf.tensor2d(dataset.train.x, [rows, dataset.inputCount]);
            const y = labelTensor(dataset, dataset.train.y);
            let dataLoss = 0;
            const result = tf.variableGrads(() => {
              const loss = lossFromLogits(task, forward(network, x, dropout), y);
              dataLoss = loss.dataSync()[0]!;
              return params.l2 > 0 ? (tf.add(loss, l2Penalty(network, params.l2)) as tf.Scalar) : loss;
            }, network.variables);
            for (const g of Object.values(result.grads)) tf.keep(g);
            return { value: dataLoss, grads: network.variables.map((v) => result.grads[v.name]!) };
          });
          expect(Math.abs(engineLoss - value)).toBeLessThan(1e-5 * Math.max(1, Math.abs(value)));
          expect(actual).toHaveLength(grads.length);
          grads.forEach((reference, i) => expect(relativeError(actual[i]!, reference.dataSync()), network.variables[i]!.name).toBeLessThan(TOLERANCE));
          tf.dispose(grads);
        } finally {
          disposeNetwork(network);
        }
      });
    }
  }
});

describe('the memory check', () => {
  it('prices a plain network as before and a residual one above it', () => {
    expect(networkTrainingBytes({ depth: 4, width: 256 }, 20, 1, 128)).toBe(trainingBytes(20, 4, 256, 1, 128));
    expect(networkTrainingBytes({ depth: 4, width: 256, block: 'residual' }, 20, 1, 128)).toBeGreaterThan(1.9 * trainingBytes(20, 4, 256, 1, 128));
  });
});

describe('training residual blocks', () => {
  const dataset = syntheticDataset({ task: 'multiclass', rows: 120, inputs: 5, classes: 3, seed: 12 });
  const configuration: TrialConfiguration = { ...baseParams, depth: 2, width: 12, shape: 'funnel', block: 'residual', dropout: 0.1, batchSize: 16, l2: 1e-4 };
  const request = { trialId: 3, seed: 5, configuration, dataset, datasetId: dataset.id, fromEpoch: 0, toEpoch: 6 };

  it('follows the tfjs path epoch by epoch (validation loss within 1e-4 over 6 epochs of Adam with dropout)', async () => {
    // Source: tfjs 4.22 (the tfjs path's network, tf.train.adam semantics) as the reference; tolerance: Common practice (no source).
    const engine = await trainSegmentOnEngine(request);
    const reference = await trainSegment(request);
    expect(engine.status).toBe('completed');
    expect(engine.epochs).toHaveLength(6);
    engine.epochs.forEach((report, i) => expect(Math.abs(report.validationLoss - reference.epochs[i]!.validationLoss), `epoch ${i + 1}`).toBeLessThan(1e-4));
    expect(engine.epochs.at(-1)!.validationLoss).toBeLessThan(engine.epochs[0]!.validationLoss);
  });

  it('continues from its checkpoint exactly as straight through, on either trainer', async () => {
    const straight = await trainSegmentOnEngine(request);
    const first = await trainSegmentOnEngine({ ...request, toEpoch: 3 });
    const second = await trainSegmentOnEngine({ ...request, fromEpoch: 3, checkpoint: first.checkpoint! });
    expect(second.epochs.map((e) => e.validationLoss)).toEqual(straight.epochs.slice(3).map((e) => e.validationLoss));
    // The tfjs path reads the engine's checkpoint (same names, shapes and slots) and goes on training.
    const onTfjs = await trainSegment({ ...request, fromEpoch: 3, checkpoint: first.checkpoint! });
    onTfjs.epochs.forEach((report, i) => expect(Math.abs(report.validationLoss - straight.epochs[3 + i]!.validationLoss)).toBeLessThan(1e-4));
  });
});

describe('the exported residual network computes what the trained network computes', () => {
  it('tfjs functional model and ONNX LayerNormalization (opset 17, onnxruntime-node) give the tfjs path\'s outputs within 1e-5', async () => {
    // Source: onnxruntime-node, the ONNX reference runtime (LayerNormalization from operator set 17); tfjs 4.22 for the network.
    const dataset = syntheticDataset({ task: 'binary', rows: 40, inputs: 4, seed: 14 });
    const params: TrialConfiguration = { ...baseParams, depth: 2, width: 9, shape: 'funnel', block: 'residual', activation: 'leakyRelu' };
    const { trial, network } = twinNetworks(params, dataset, 4, stream('residual-export'));
    const rng = stream('residual-export-gains');
    for (const layer of trial.layers.filter((l) => l.plan.norm)) trial.writeMatrix(layer.at.normGain, layer.inStride, Float32Array.from({ length: layer.fanIn }, () => 0.5 + rng()), layer.fanIn);
    const weights = networkWeights(trial);
    weights.forEach((w, i) => network.variables[i]!.assign(tf.tensor(w.values, w.shape)));
    const rows = dataset.validation.rows;
    const recipe: PreprocessingRecipe = { task: 'binary', target: 't', features: ['a', 'b', 'c', 'd'].map((name) => ({ kind: 'numeric' as const, name, mean: 0, std: 1 })), inputCount: 4, classes: ['no', 'yes'] };
    try {
      const trained = tf.tidy(() => outputFromLogits('binary', forward(network, tf.tensor2d(dataset.validation.x, [rows, 4]))).dataSync() as Float32Array);
      const model = buildLayersModel(params, recipe, weights);
      try {
        expect(largestDifference(predictRows(model, dataset.validation.x, rows, 4), trained)).toBeLessThan(1e-5);
        // Source: tfjs 4.22, LayersModel.countParams, for the weight count the memory check prices.
        expect(weightCount(params, 4, 1)).toBe(model.countParams());
        const configuration = { recipe, study: 's', trialId: 0, outputs: { task: 'binary', classes: ['no', 'yes'], meaning: '' } } as unknown as ExportConfiguration;
        const bytes = onnxModelBytes(model, configuration, 'test');
        const session = await ort.InferenceSession.create(bytes);
        try {
          const result = await session.run({ features: new ort.Tensor('float32', dataset.validation.x, [rows, 4]) });
          expect(largestDifference(result.output!.data as Float32Array, trained)).toBeLessThan(1e-5);
        } finally {
          await session.release();
        }
      } finally {
        model.dispose();
      }
    } finally {
      disposeNetwork(network);
    }
  });
});

function largestDifference(a: ArrayLike<number>, b: ArrayLike<number>): number {
  expect(a.length).toBe(b.length);
  let largest = 0;
  for (let i = 0; i < a.length; i++) largest = Math.max(largest, Math.abs(a[i]! - b[i]!));
  return largest;
}
