/**
 * Class weights of the training loss: the balanced formula, the normalisation to a mean row weight
 * of 1, the refusals, and the weighted loss's gradient in both trainers against tfjs's own weighted
 * losses (tf.losses.*CrossEntropy with weights), differentiated by tf.variableGrads.
 */
import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import * as tf from '@tensorflow/tfjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { normaliseClassWeights, rawClassWeights, trainingClassWeights } from '../src/data/class-weights.js';
import { datasetId } from '../src/data/dataset-id.js';
import { prepareData, toSharedDataset } from '../src/data/prepare.js';
import { UserError } from '../src/core/errors.js';
import type { SharedDataset } from '../src/core/job.js';
import { stream } from '../src/random/streams.js';
import { dataSchema } from '../src/study/definition.js';
import { decodeDataset, encodeDataset } from '../src/transports/redis/dataset.js';
import { validateStudy } from '../src/study/load.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { disposeNetwork, forward, lossFromLogits } from '../src/trainers/tfjs/network.js';
import { runTrainRequest } from '../src/trainers/run-request.js';
import { engineGradients, labelTensor, relativeError, twinNetworks } from './helpers/engine.js';
import { baseParams, syntheticDataset, trainRequest } from './helpers/synthetic.js';

let folder: string;
beforeAll(async () => {
  await initBackend();
  folder = await mkdtemp(path.join(tmpdir(), 'rungwise-class-weights-'));
  await mkdir(path.join(folder, 'data'));
});
afterAll(async () => {
  tf.disposeVariables();
  await rm(folder, { recursive: true, force: true });
});

describe('balanced class weights', () => {
  it('are n / (classes x n_c): 6 rows of labels 1,1,1,1,0,0 give 1.5 and 0.75', () => {
    // Source: scikit-learn documentation, sklearn.utils.class_weight.compute_class_weight, Examples
    // (y = [1, 1, 1, 1, 0, 0] gives array([1.5, 0.75])); King and Zeng, "Logistic Regression in Rare Events Data", 2001.
    expect(rawClassWeights('balanced', ['0', '1'], [2, 4])).toEqual([1.5, 0.75]);
    expect(trainingClassWeights('balanced', ['0', '1'], [1, 1, 1, 1, 0, 0])).toEqual([1.5, 0.75]);
  });

  it('are 0.625 and 2.5 for 100 rows of classes 80/20, already of mean row weight 1', () => {
    // Source: /work/shared/REFERENCES.md, "Class imbalance" (derived from the formula).
    const labels = Array.from({ length: 100 }, (_, i) => (i < 80 ? 0 : 1));
    const weights = trainingClassWeights('balanced', ['major', 'minor'], labels)!;
    expect(weights[0]).toBeCloseTo(0.625, 12);
    expect(weights[1]).toBeCloseTo(2.5, 12);
  });

  it('none weighs every row the same: no weights are passed to the trainers', () => {
    expect(trainingClassWeights('none', ['a', 'b'], [0, 1, 1])).toBeUndefined();
  });
});

describe('class weights given per class', () => {
  it('are scaled so the training rows weigh 1 on average; an unnamed class weighs 1 before scaling', () => {
    // 3 rows of a, 1 of b, 1 of c; a: 1, b: 10, c: 1 -> total 3 + 10 + 1 = 14 over 5 rows: scale 5/14.
    const weights = trainingClassWeights({ b: 10 }, ['a', 'b', 'c'], [0, 0, 0, 1, 2])!;
    expect(weights[0]).toBeCloseTo(5 / 14, 12);
    expect(weights[1]).toBeCloseTo(50 / 14, 12);
    expect(weights[2]).toBeCloseTo(5 / 14, 12);
    expect(normaliseClassWeights([2, 2], [5, 5])).toEqual([1, 1]);
  });

  it('refuses a label the target does not hold, naming the field and the classes', async () => {
    await writeFile(path.join(folder, 'data', 'two.csv'), ['x,kind', ...Array.from({ length: 20 }, (_, i) => `${i},${i % 4 === 0 ? 'rare' : 'common'}`)].join('\n') + '\n');
    const settings = dataSchema.parse({ csv: '../data/two.csv', target: 'kind', task: 'binary', classWeights: { rarely: 3 } });
    const error = await prepareData(settings, path.join(folder, 'study', 'study.json')).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(UserError);
    expect((error as UserError).message).toMatch(/study\.json: data\.classWeights\.rarely: 'rarely' is not a class of column 'kind'; expected one of 'common', 'rare'$/);
    expect((error as UserError).message.split('\n')).toHaveLength(1);
  });

  it('refuses a weight that is not above 0, naming the field', () => {
    const definition = {
      name: 'w',
      data: { csv: 'a.csv', target: 'kind', task: 'binary', classWeights: { rare: 0 } },
      space: { depth: { min: 1, max: 1 }, width: { min: 4, max: 4 }, activation: ['relu'], learningRate: { min: 0.01, max: 0.01 } },
      budget: { trials: 1, maxEpochs: 1 },
    };
    expect(() => validateStudy(definition, 'study.json')).toThrow(/study\.json: data\.classWeights\.rare: .*0/);
    expect(() => validateStudy({ ...definition, data: { ...definition.data, classWeights: 'even' } }, 'study.json')).toThrow(/data\.classWeights/);
    expect(() => validateStudy({ ...definition, data: { ...definition.data, task: 'regression', classWeights: 'balanced' } }, 'study.json')).toThrow(
      /study\.json: data\.classWeights: is for classification/,
    );
  });

  it('reach the shared data set and change its id, so a worker never reuses unweighted data', async () => {
    const plain = dataSchema.parse({ csv: '../data/two.csv', target: 'kind', task: 'binary' });
    const balanced = dataSchema.parse({ ...plain, classWeights: 'balanced' });
    const studyFile = path.join(folder, 'study', 'study.json');
    const a = (await prepareData(plain, studyFile)).data;
    const b = (await prepareData(balanced, studyFile)).data;
    expect(a.classWeights).toBeUndefined();
    const counts = [0, 1].map((c) => Array.from(b.train.y).filter((y) => y === c).length);
    b.classWeights!.forEach((weight, c) => expect(weight).toBeCloseTo(b.train.rows / (2 * counts[c]!), 12));
    expect(toSharedDataset(b, 'x').classWeights).toEqual(b.classWeights);
    expect(datasetId(a)).not.toBe(datasetId(b));
    // A worker on another machine gets them with the data set.
    expect(decodeDataset(encodeDataset(toSharedDataset(b, 'w')), 'w').classWeights).toEqual(b.classWeights);
  });
});

/** tfjs's own weighted cross-entropy: each row's loss times its weight, summed, over the number of rows (all weights are > 0). */
function tfjsWeightedLoss(dataset: SharedDataset, logits: tf.Tensor2D, y: tf.Tensor2D, rowWeights: tf.Tensor2D): tf.Scalar {
  const reduction = tf.Reduction.SUM_BY_NONZERO_WEIGHTS;
  if (dataset.task === 'binary') return tf.losses.sigmoidCrossEntropy(y, logits, rowWeights, 0, reduction) as tf.Scalar;
  return tf.losses.softmaxCrossEntropy(y, logits, tf.reshape(rowWeights, [-1]), 0, reduction) as tf.Scalar;
}

describe('weighted training loss against tf.losses with weights', () => {
  // Source: tfjs 4.22 (tf.losses.sigmoidCrossEntropy / softmaxCrossEntropy with weights and
  // Reduction.SUM_BY_NONZERO_WEIGHTS, differentiated by tf.variableGrads) as a general-purpose reference library.
  const TOLERANCE = 1e-4;
  for (const task of ['binary', 'multiclass'] as const) {
    const base = syntheticDataset({ task, rows: 50, inputs: 5, classes: 3, seed: 6, validationFraction: 0.25 });
    const dataset: SharedDataset = { ...base, id: `${base.id}-weighted`, classWeights: task === 'binary' ? [0.4, 2.5] : [0.5, 3, 1.25] };
    for (const activation of ['relu', 'tanh'] as const) {
      it(`${task}, ${activation}: the engine's loss and every gradient match, and so does the tfjs path's loss`, () => {
        const rows = dataset.train.rows;
        const params = { ...baseParams, depth: 2, width: 10, activation, batchSize: rows };
        const { trial, network } = twinNetworks(params, dataset, 13, stream('weighted-gradients', task, activation));
        try {
          trial.setUpdating(false);
          trial.setOrder(Int32Array.from({ length: rows }, (_, i) => i));
          const engineLoss = trial.step(0, rows);
          const actual = engineGradients(trial);
          const { reference, ownLoss, grads } = tf.tidy(() => {
            const x = tf.tensor2d(dataset.train.x, [rows, dataset.inputCount]);
            const y = labelTensor(dataset, dataset.train.y);
            const w = tf.tensor2d(Float32Array.from(dataset.train.y, (label) => dataset.classWeights![label]!), [rows, 1]);
            let value = 0;
            const result = tf.variableGrads(() => {
              const loss = tfjsWeightedLoss(dataset, forward(network, x), y, w);
              value = loss.dataSync()[0]!;
              return loss;
            }, network.variables);
            for (const g of Object.values(result.grads)) tf.keep(g);
            const own = lossFromLogits(task, forward(network, x), y, w).dataSync()[0]!;
            return { reference: value, ownLoss: own, grads: network.variables.map((v) => result.grads[v.name]!) };
          });
          const unweighted = tf.tidy(() => lossFromLogits(task, forward(network, tf.tensor2d(dataset.train.x, [rows, dataset.inputCount])), labelTensor(dataset, dataset.train.y)).dataSync()[0]!);
          expect(Math.abs(reference - unweighted)).toBeGreaterThan(1e-3); // the weights matter here
          expect(Math.abs(engineLoss - reference)).toBeLessThan(1e-5 * Math.max(1, reference));
          expect(Math.abs(ownLoss - reference)).toBeLessThan(1e-5 * Math.max(1, reference));
          grads.forEach((g, i) => expect(relativeError(actual[i]!, g.dataSync()), network.variables[i]!.name).toBeLessThan(TOLERANCE));
          tf.dispose(grads);
        } finally {
          disposeNetwork(network);
        }
      });
    }
  }
});

describe('weighted training in both trainers', () => {
  it('the engine and the tfjs path give the same epoch losses on a weighted data set, and differ from unweighted training', async () => {
    const base = syntheticDataset({ task: 'multiclass', rows: 120, inputs: 4, classes: 3, seed: 8 });
    const weighted: SharedDataset = { ...base, id: `${base.id}-weighted-epochs`, classWeights: [0.5, 2, 1] };
    const engine = await runTrainRequest(trainRequest(weighted, { toEpoch: 2 }));
    const reference = await runTrainRequest(trainRequest(weighted, { toEpoch: 2, trainer: 'tfjs' }));
    const plain = await runTrainRequest(trainRequest(base, { toEpoch: 2 }));
    engine.epochs.forEach((report, i) => {
      const other = reference.epochs[i]!;
      // Source: tfjs 4.22 as the reference trainer (the engine sums in another order: last-bit differences).
      expect(Math.abs(report.trainLoss - other.trainLoss)).toBeLessThan(1e-5);
      expect(Math.abs(report.validationLoss - other.validationLoss)).toBeLessThan(1e-5);
    });
    expect(Math.abs(engine.epochs[0]!.trainLoss - plain.epochs[0]!.trainLoss)).toBeGreaterThan(1e-4);
  });
});
