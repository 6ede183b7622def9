/**
 * Per-layer widths (`shape: funnel`): the stated rule, the weight count against tfjs's own count, the
 * engine's gradients against tfjs's automatic differentiation, the exported tfjs and ONNX models
 * against the trained network, and studies that run, export and predict with a funnel (and with
 * residual blocks).
 */
import { readFileSync } from 'node:fs';
import { mkdtemp, readFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import * as tf from '@tensorflow/tfjs';
import * as ort from 'onnxruntime-node';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { exportModel } from '../src/commands/export.js';
import { run } from '../src/commands/run.js';
import { TASKS, type TrialConfiguration } from '../src/core/configuration.js';
import { hiddenWidths, weightCount } from '../src/core/size.js';
import { readCsv } from '../src/data/csv.js';
import type { PreprocessingRecipe } from '../src/data/types.js';
import type { ExportConfiguration } from '../src/export/configuration.js';
import { encodeRows, loadModel } from '../src/export/hand-off.js';
import { buildLayersModel, predictRows } from '../src/export/model-files.js';
import { onnxModelBytes } from '../src/export/onnx.js';
import { stream } from '../src/random/streams.js';
import { configurationForTrial } from '../src/space/sample.js';
import { listedConfigurationSchema, listedScheduleProblem, spaceSchema } from '../src/space/schema.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { networkWeights } from '../src/trainers/engine/checkpoint-state.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { disposeNetwork, forward, l2Penalty, lossFromLogits, outputFromLogits } from '../src/trainers/tfjs/network.js';
import { engineGradients, labelTensor, relativeError, twinNetworks } from './helpers/engine.js';
import { baseParams, syntheticDataset } from './helpers/synthetic.js';
import { runOnnx } from './helpers/exports.js';

const TINY = fileURLToPath(new URL('../studies/tiny/', import.meta.url));

beforeAll(() => initBackend());
afterAll(() => tf.disposeVariables());

const funnel = (depth: number, width: number): TrialConfiguration => ({ ...baseParams, depth, width, shape: 'funnel' });

function largestDifference(a: ArrayLike<number>, b: ArrayLike<number>): number {
  expect(a.length).toBe(b.length);
  let largest = 0;
  for (let i = 0; i < a.length; i++) largest = Math.max(largest, Math.abs(a[i]! - b[i]!));
  return largest;
}

describe('the funnel rule (src/core/size.ts)', () => {
  // Ours: the rule docs/training.md states (halve per layer, rounded up, never below min(width, 8)).
  it('halves the width per hidden layer, rounded up, down to min(width, 8); constant keeps every layer at width', () => {
    expect(hiddenWidths(funnel(4, 64))).toEqual([64, 32, 16, 8]);
    expect(hiddenWidths(funnel(5, 64))).toEqual([64, 32, 16, 8, 8]);
    expect(hiddenWidths(funnel(3, 20))).toEqual([20, 10, 8]);
    expect(hiddenWidths(funnel(3, 100))).toEqual([100, 50, 25]);
    expect(hiddenWidths(funnel(3, 6))).toEqual([6, 6, 6]);
    expect(hiddenWidths({ depth: 3, width: 64 })).toEqual([64, 64, 64]);
    expect(hiddenWidths({ depth: 3, width: 64, shape: 'constant' })).toEqual([64, 64, 64]);
  });

  it('counts the weights tfjs counts in the exported model (LayersModel.countParams)', () => {
    // Source: tfjs 4.22, tf.LayersModel.countParams (the sum of every weight's size), as a reference library.
    const recipe = { task: 'multiclass', target: 't', features: [], inputCount: 7, classes: ['a', 'b', 'c'] } as unknown as PreprocessingRecipe;
    for (const configuration of [funnel(4, 64), funnel(3, 20), { ...baseParams, depth: 3, width: 64 }, { ...baseParams, depth: 1, width: 5, shape: 'funnel' as const }]) {
      const widths = [7, ...hiddenWidths(configuration), 3];
      const weights = widths.slice(1).flatMap((units, l) => [
        { name: `k${l}`, shape: [widths[l]!, units], values: new Float32Array(widths[l]! * units) },
        { name: `b${l}`, shape: [units], values: new Float32Array(units) },
      ]);
      const model = buildLayersModel(configuration, recipe, weights);
      try {
        expect(weightCount(configuration, 7, 3), JSON.stringify(configuration)).toBe(model.countParams());
      } finally {
        model.dispose();
      }
    }
  });
});

describe('a space with a shape', () => {
  const space = spaceSchema.parse({ depth: { min: 1, max: 4 }, width: { min: 4, max: 256, log: true }, activation: ['relu'], learningRate: { min: 0.001, max: 0.1 } });

  it('draws every other field as the same space without one, and both shapes over 200 trials', () => {
    const withShape = { ...space, shape: ['constant', 'funnel'] as ('constant' | 'funnel')[] };
    const shapes = new Set<string>();
    for (let trial = 0; trial < 200; trial++) {
      const plain = configurationForTrial(space, 5, trial);
      const shaped = configurationForTrial(withShape, 5, trial);
      expect(plain.shape).toBeUndefined();
      const { shape, ...rest } = shaped;
      expect(rest).toEqual(plain);
      shapes.add(shape!);
    }
    expect([...shapes].sort()).toEqual(['constant', 'funnel']);
  });

  it('wants a tryFirst entry to give shape exactly when the space has one', () => {
    const entry = listedConfigurationSchema.parse({ depth: 2, width: 16, activation: 'relu', learningRate: 0.01, batchSize: 32 });
    const withShape = { ...space, shape: ['funnel' as const] };
    expect(listedScheduleProblem(entry, withShape)).toBe('lacks shape, which this space draws (funnel); give it');
    expect(listedScheduleProblem({ ...entry, shape: 'funnel' }, space)).toBe('gives shape but the space has no shape; leave it out');
    expect(listedScheduleProblem({ ...entry, shape: 'funnel' }, withShape)).toBeUndefined();
  });
});

// Source: tfjs 4.22 (tf.variableGrads) as a general-purpose reference library.
const TOLERANCE = 1e-4;

describe('engine gradients of a funnel against tf.variableGrads', () => {
  for (const task of TASKS) {
    const dataset = syntheticDataset({ task, rows: 50, inputs: 5, classes: 3, seed: 6, validationFraction: 0.25 });
    for (const activation of ['relu', 'tanh'] as const) {
      it(`${task}, ${activation}, widths 21, 11, 8 (padded), with L2: every parameter's gradient within ${TOLERANCE} relative error`, () => {
        const rows = dataset.train.rows;
        const params: TrialConfiguration = { ...funnel(3, 21), activation, l2: 0.01, batchSize: rows };
        const { trial, network } = twinNetworks(params, dataset, 13, stream('funnel-gradients', task, activation));
        try {
          expect(trial.layers.map((layer) => layer.fanOut)).toEqual([21, 11, 8, dataset.outputCount]);
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
              return tf.add(loss, l2Penalty(network, params.l2)) as tf.Scalar;
            }, network.variables);
            for (const g of Object.values(result.grads)) tf.keep(g);
            return { value: dataLoss, grads: network.variables.map((v) => result.grads[v.name]!) };
          });
          expect(Math.abs(engineLoss - value)).toBeLessThan(1e-5 * Math.max(1, Math.abs(value)));
          expect(grads).toHaveLength(8);
          grads.forEach((reference, i) => expect(relativeError(actual[i]!, reference.dataSync()), network.variables[i]!.name).toBeLessThan(TOLERANCE));
          tf.dispose(grads);
        } finally {
          disposeNetwork(network);
        }
      });
    }
  }
});

describe('the exported funnel computes what the trained network computes', () => {
  it('tfjs Layers model and ONNX (onnxruntime-node) give the tfjs path\'s outputs within 1e-5', async () => {
    const dataset = syntheticDataset({ task: 'multiclass', rows: 40, inputs: 4, classes: 3, seed: 9 });
    const params: TrialConfiguration = { ...funnel(3, 17), activation: 'elu' };
    const { network } = twinNetworks(params, dataset, 3, stream('funnel-export'));
    const rows = dataset.validation.rows;
    const recipe: PreprocessingRecipe = {
      task: 'multiclass',
      target: 'kind',
      features: ['a', 'b', 'c', 'd'].map((name) => ({ kind: 'numeric' as const, name, mean: 0, std: 1 })),
      inputCount: 4,
      classes: ['x', 'y', 'z'],
    };
    try {
      // Source: onnxruntime-node 1.x, the ONNX reference runtime; tfjs 4.22 for the trained network.
      const trained = tf.tidy(() => outputFromLogits('multiclass', forward(network, tf.tensor2d(dataset.validation.x, [rows, 4]))).dataSync() as Float32Array);
      const weights = network.variables.map((v) => ({ name: v.name, shape: [...v.shape], values: v.dataSync() as Float32Array }));
      const model = buildLayersModel(params, recipe, weights);
      try {
        expect(model.layers.map((layer) => (layer.getConfig() as { units?: number }).units)).toEqual([17, 9, 8, 3]);
        expect(largestDifference(predictRows(model, dataset.validation.x, rows, 4), trained)).toBeLessThan(1e-5);
        const configuration = { recipe, study: 's', trialId: 0, outputs: { task: 'multiclass', classes: ['x', 'y', 'z'], meaning: '' } } as unknown as ExportConfiguration;
        const onnx = await runOnnx(onnxModelBytes(model, configuration, 'test'), dataset.validation.x, rows, 4);
        expect(largestDifference(onnx, trained)).toBeLessThan(1e-5);
      } finally {
        model.dispose();
      }
    } finally {
      disposeNetwork(network);
    }
  });
});

const studies: { name: string; space: { shape: string[]; block?: string[] } }[] = [
  { name: 'shape funnel', space: { shape: ['funnel'] } },
  { name: 'shape funnel and residual blocks', space: { shape: ['funnel'], block: ['residual'] } },
];

describe.each(studies)('a study with $name', ({ space: added }) => {
  it('trains its networks, exports rank 1 with its widths, and predict gives the ONNX model\'s outputs', async () => {
    const definition = JSON.parse(readFileSync(path.join(TINY, 'study.json'), 'utf8')) as StudyDefinitionInput & { $schema?: string };
    delete definition.$schema;
    const space = { ...definition.space, depth: { min: 2, max: 3 }, width: { min: 24, max: 32 }, ...added };
    const out = path.join(await mkdtemp(path.join(tmpdir(), 'rungwise-funnel-')), 'study');
    await run({ definition: { ...definition, space, budget: { trials: 2, maxEpochs: 2 } } as StudyDefinitionInput, baseDir: TINY, out, progress: false });
    const study = JSON.parse(await readFile(path.join(out, 'study.json'), 'utf8')) as { trials: { configuration: TrialConfiguration }[] };
    expect(study.trials.map((t) => t.configuration.shape)).toEqual(['funnel', 'funnel']);
    expect(study.trials.map((t) => t.configuration.block)).toEqual(added.block ? ['residual', 'residual'] : [undefined, undefined]);
    const exported = (await exportModel({ dir: out, format: 'onnx' })).out;
    const model = await loadModel(exported);
    try {
      const configuration = model.configuration;
      const layers = JSON.parse(await readFile(path.join(exported, 'model.json'), 'utf8')).modelTopology.config.layers as { class_name: string; config: { units?: number } }[];
      const units = layers.map((l) => l.config.units).filter((u) => u !== undefined);
      const trained = configuration.configuration;
      const { width } = trained;
      expect(units).toEqual(added.block ? [width, ...hiddenWidths(trained).flatMap((inner) => [inner, width]), 1] : [...hiddenWidths(trained), 1]);
      expect(layers.filter((l) => l.class_name === 'LayerNormalization')).toHaveLength(added.block ? trained.depth + 1 : 0);
      expect(trained.shape).toBe('funnel');
      const table = await readCsv(path.join(TINY, 'tiny.csv'));
      const rows = table.rows.slice(0, 50);
      const x = encodeRows(configuration, rows);
      const expected = predictRows(model.network, x, rows.length, configuration.recipe.inputCount);
      // ONNX inputs as model.onnx documents them: numeric columns as written, categorical ones one-hot.
      const raw = Float32Array.from(
        rows.flatMap((row) => configuration.recipe.features.flatMap((f) => (f.kind === 'numeric' ? [Number(row[f.name])] : f.categories.map((c) => (c === row[f.name] ? 1 : 0))))),
      );
      const onnx = await runOnnx(await readFile(path.join(exported, 'model.onnx')), raw, rows.length, configuration.recipe.inputCount);
      expect(largestDifference(onnx, expected)).toBeLessThan(1e-5);
    } finally {
      model.dispose();
    }
  });
});
