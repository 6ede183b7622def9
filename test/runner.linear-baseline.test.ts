/**
 * The linear baseline (a network without hidden layers trained by the engine) against a reference
 * least-squares fit on the same rows: the Auto MPG data as `vega-datasets`' cars.json.
 * Source: Quinlan, "Combining Instance-Based and Model-Based Learning", ICML 1993 (the Auto MPG data,
 * UCI Machine Learning Repository); the reference solve is ml-matrix's `solve` (least squares through the singular value decomposition).
 */
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { Matrix, solve } from 'ml-matrix';
import { afterAll, describe, expect, it } from 'vitest';
import { prepareData, toSharedDataset } from '../src/data/index.js';
import { datasetId } from '../src/data/dataset-id.js';
import { loadStudy } from '../src/study/load.js';
import { linearOf } from '../src/runner/baselines.js';

const FEATURES = ['Weight_in_lbs', 'Horsepower', 'Displacement', 'Acceleration'] as const;
const TARGET = 'Miles_per_Gallon';
/** Relative tolerance on the validation RMSE (common practice (no source): Adam for 100 epochs against an exact solve). */
const TOLERANCE = 0.02;
let dir: string;
afterAll(async () => dir && rm(dir, { recursive: true, force: true }));

async function writeCars(): Promise<string> {
  dir = await mkdtemp(path.join(tmpdir(), 'rungwise-linear-'));
  const entry = createRequire(import.meta.url).resolve('vega-datasets');
  const records = JSON.parse(await readFile(path.resolve(path.dirname(entry), '..', 'data', 'cars.json'), 'utf8')) as Record<string, number | string | null>[];
  const columns = [...FEATURES, TARGET];
  // Rows with a missing value are left out, so no imputation stands between the two fits.
  const rows = records.filter((r) => columns.every((c) => r[c] !== null)).map((r) => columns.map((c) => String(r[c])).join(','));
  await writeFile(path.join(dir, 'cars.csv'), [columns.join(','), ...rows].join('\n') + '\n');
  const definition = {
    name: 'cars',
    data: { csv: 'cars.csv', target: TARGET, task: 'regression', splitSeed: 1 },
    space: { depth: { min: 1, max: 1 }, width: { min: 4, max: 4 }, activation: ['relu'], learningRate: { min: 0.01, max: 0.01 }, batchSize: [32], optimizer: ['adam'] },
    budget: { trials: 1, maxEpochs: 100 },
    sampler: { kind: 'random', seed: 1 },
    goal: { metric: 'rmse' },
  };
  await writeFile(path.join(dir, 'study.json'), JSON.stringify(definition));
  return path.join(dir, 'study.json');
}

describe('the linear baseline', () => {
  it('scores within 2% of an exact least-squares fit on the same standardised training rows (validation RMSE, Auto MPG)', async () => {
    const file = await writeCars();
    const { definition } = await loadStudy(file);
    const { data } = await prepareData(definition.data, file);
    const linear = await linearOf([toSharedDataset(data, datasetId(data))], { metric: 'rmse', better: 'lower' }, 100, 1);
    expect(linear?.what).toMatch(/^least-squares regression/);
    // Reference: ordinary least squares with an intercept on the same rows, by ml-matrix.
    const inputs = data.recipe.inputCount;
    const design = (x: Float32Array, rows: number): Matrix => new Matrix(Array.from({ length: rows }, (_, r) => [1, ...Array.from(x.subarray(r * inputs, (r + 1) * inputs))]));
    const coefficients = solve(design(data.train.x, data.train.rows), Matrix.columnVector(Array.from(data.train.y)), true);
    const predicted = design(data.validation.x, data.validation.rows).mmul(coefficients).getColumn(0);
    const { mean, std } = data.recipe.targetScaling!;
    let squared = 0;
    predicted.forEach((p, r) => (squared += ((p - data.validation.y[r]!) * std) ** 2));
    const reference = Math.sqrt(squared / data.validation.rows);
    expect(mean).toBeGreaterThan(10);
    expect(reference).toBeGreaterThan(2);
    expect(reference).toBeLessThan(6);
    expect(Math.abs(linear!.metrics.rmse! - reference) / reference).toBeLessThan(TOLERANCE);
  });
});
