import { readFileSync } from 'node:fs';
import { mkdtemp, readFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import * as ort from 'onnxruntime-node';
import { beforeAll, describe, expect, it } from 'vitest';
import { exportModel } from '../src/commands/export.js';
import { run } from '../src/commands/run.js';
import { isMissing, readCsv, type CsvTable } from '../src/data/csv.js';
import { onnxInputs, runOnnx } from './helpers/exports.js';
import type { PreprocessingRecipe } from '../src/data/types.js';
import { loadModel, predict, type ClassPrediction, type ValuePrediction } from '../src/export/hand-off.js';
import type { ExportConfiguration } from '../src/export/configuration.js';
import { buildLayersModel, predictRows } from '../src/export/model-files.js';
import { onnxModelBytes } from '../src/export/onnx.js';
import { ACTIVATIONS, type TrialConfiguration } from '../src/core/configuration.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { exportTinyStudies, type TinyExport } from './helpers/exports.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const DEMO = path.join(ROOT, 'studies/demo');


/** rungwise's predictions for the table as the network's outputs (binary: probability of the second class). */
async function rungwiseOutputs(exportDir: string, table: CsvTable): Promise<{ outputs: number[]; configuration: ExportConfiguration }> {
  const model = await loadModel(exportDir);
  try {
    const answers = predict(model, table.rows);
    const { recipe } = model.configuration;
    const classes = recipe.classes ?? [];
    const outputs =
      recipe.task === 'regression'
        ? answers.map((a) => (a as ValuePrediction).predicted)
        : recipe.task === 'binary'
          ? answers.map((a) => (a as ClassPrediction).probabilities[classes[1]!]!)
          : answers.flatMap((a) => classes.map((c) => (a as ClassPrediction).probabilities[c]!));
    return { outputs, configuration: model.configuration };
  } finally {
    model.dispose();
  }
}

function largestDifference(a: ArrayLike<number>, b: ArrayLike<number>): number {
  expect(a.length).toBe(b.length);
  let largest = 0;
  for (let i = 0; i < a.length; i++) largest = Math.max(largest, Math.abs(a[i]! - b[i]!));
  return largest;
}

let demoExport: string;
let tiny: TinyExport[];

beforeAll(async () => {
  // The shipped demo study with a small budget, passed to the library as an object.
  const definition = JSON.parse(readFileSync(path.join(DEMO, 'study.json'), 'utf8')) as StudyDefinitionInput & { $schema?: string };
  delete definition.$schema;
  const out = path.join(await mkdtemp(path.join(tmpdir(), 'rungwise-onnx-')), 'demo');
  await run({ definition: { ...definition, budget: { trials: 3, maxEpochs: 2 } }, baseDir: DEMO, out, progress: false });
  demoExport = (await exportModel({ dir: out, format: 'onnx' })).out;
  tiny = await exportTinyStudies('onnx');
});

describe('export --format onnx, run by onnxruntime-node', () => {
  it('gives rungwise predictions within 1e-5 on all 3000 rows of the demo data (binary, missing values included)', async () => {
    const table = await readCsv(path.join(DEMO, 'pump-logs.csv'));
    const { outputs, configuration } = await rungwiseOutputs(demoExport, table);
    const onnx = await runOnnx(path.join(demoExport, 'model.onnx'), onnxInputs(configuration.recipe, table), table.rows.length, configuration.recipe.inputCount);
    expect(table.rows.length).toBe(3000);
    expect(table.rows.some((row) => Object.values(row).some(isMissing))).toBe(true);
    expect(largestDifference(onnx, outputs)).toBeLessThan(1e-5);
  });

  it('gives rungwise predictions within 1e-5 for every task on the tiny studies', async () => {
    expect(tiny.map((t) => t.task)).toEqual(['binary', 'multiclass', 'regression']);
    for (const exported of tiny) {
      const table = await readCsv(exported.csv);
      const { outputs, configuration } = await rungwiseOutputs(exported.exportDir, table);
      const onnx = await runOnnx(path.join(exported.exportDir, 'model.onnx'), onnxInputs(configuration.recipe, table), table.rows.length, configuration.recipe.inputCount);
      const tolerance = exported.task === 'regression' ? 1e-5 * Math.max(1, ...outputs.map(Math.abs)) : 1e-5;
      expect(largestDifference(onnx, outputs), exported.task).toBeLessThan(tolerance);
    }
  });

  it('describes its inputs in configuration.json, in the order of the network inputs', async () => {
    const configuration = JSON.parse(await readFile(path.join(demoExport, 'configuration.json'), 'utf8')) as ExportConfiguration;
    expect(configuration.onnx).toMatchObject({ file: 'model.onnx', input: 'features', output: 'output', inputs: configuration.inputs });
    expect(configuration.onnx!.categorical).toContain('one-hot');
  });

  it('computes every activation of the search space as tfjs does (within 1e-5)', async () => {
    await initBackend();
    const recipe: PreprocessingRecipe = {
      task: 'multiclass',
      target: 'kind',
      features: [
        { kind: 'numeric', name: 'a', mean: 3, std: 2 },
        { kind: 'categorical', name: 'b', categories: ['p', 'q'], fill: 'q' },
        { kind: 'numeric', name: 'c', mean: -1, std: 0.5 },
      ],
      inputCount: 4,
      classes: ['x', 'y', 'z'],
    };
    let seed = 12345;
    const next = (): number => ((seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31) * 2 - 1;
    const rows = 16;
    const raw = Float32Array.from({ length: rows * 4 }, (_, i) => (i % 4 === 1 || i % 4 === 2 ? (next() > 0 ? 1 : 0) : next() * 4));
    raw[4] = Number.NaN; // a missing 'a' in row 1
    const encoded = Float32Array.from(raw, (v, i) => (i % 4 === 0 ? (Number.isNaN(v) ? 0 : (v - 3) / 2) : i % 4 === 3 ? (v + 1) / 0.5 : v));
    for (const activation of ACTIVATIONS) {
      const params = { depth: 2, width: 5, activation, learningRate: 0.01, batchSize: 16, optimizer: 'adam', l2: 0, dropout: 0 } as TrialConfiguration;
      const shapes: number[][] = [[4, 5], [5], [5, 5], [5], [5, 3], [3]];
      const weights = shapes.map((shape, i) => ({ name: `w${i}`, shape, values: Float32Array.from({ length: shape.reduce((a, b) => a * b, 1) }, () => next() * 1.5) }));
      const network = buildLayersModel(params, recipe, weights);
      try {
        const expected = predictRows(network, encoded, rows, 4);
        const bytes = onnxModelBytes(network, { recipe, study: 's', trialId: 0, outputs: { task: 'multiclass', classes: ['x', 'y', 'z'], meaning: '' } } as unknown as ExportConfiguration, 'test');
        const onnx = await runOnnx(bytes, raw, rows, 4);
        expect(largestDifference(onnx, expected), activation).toBeLessThan(1e-5);
      } finally {
        network.dispose();
      }
    }
  });
});
