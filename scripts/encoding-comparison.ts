/**
 * The numeric encodings (`space.numericEncoding`) against none, on the same networks: the demo study
 * (studies/demo/study.json) and the cars set of `vega-datasets` (regression, as
 * scripts/reference-comparison.ts reads it), each run once per encoding with the space's list holding
 * that one encoding. The encoding is drawn after every other field, so the three runs draw the same
 * configurations (same seed) and differ only in the inputs. Reports per run: the winner's test score
 * (rank 1 exported as trained, scored by `predict` on the held-out test rows), the median validation
 * score of all trials, and the wall time.
 *
 *   node dist/scripts/encoding-comparison.js [--sets demo,cars] [--seeds 1] [--threads 2]
 *     [--encodings none,piecewise-linear,periodic] [--scale sigma] [--bins T]
 */
import { mkdir, readFile, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { run } from '../src/commands/run.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { exportModel } from '../src/commands/export.js';
import { NUMERIC_ENCODINGS } from '../src/core/configuration.js';
import { loadModel, predict, type ClassPrediction, type InputRow, type ValuePrediction } from '../src/export/hand-off.js';
import { readCsv } from '../src/data/csv.js';
import { auc } from '../src/metrics/metrics.js';
import type { SplitRecord } from '../src/store/split-record.js';
import { csvText, SETS } from './reference-comparison.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');

interface Comparison {
  name: string;
  /** The study definition without its numeric encoding; `data.csv` absolute. */
  definition: Record<string, unknown> & { data: Record<string, unknown>; space: Record<string, unknown> };
  csv: string;
  target: string;
  /** 'auc' (binary, higher is better) or 'rmse' (regression, lower is better). */
  metric: 'auc' | 'rmse';
}

async function demoComparison(): Promise<Comparison> {
  const file = path.join(ROOT, 'studies/demo/study.json');
  const definition = JSON.parse(await readFile(file, 'utf8')) as Comparison['definition'];
  const csv = path.join(ROOT, 'studies/demo', String(definition.data['csv']));
  return { name: 'demo', definition: { ...definition, data: { ...definition.data, csv } }, csv, target: 'fails_within_week', metric: 'auc' };
}

/** The cars set with the demo's space and budget, ranked by RMSE. */
async function carsComparison(folder: string, demo: Comparison): Promise<Comparison> {
  const set = SETS['cars']!();
  const csv = path.join(folder, 'cars.csv');
  await writeFile(csv, csvText(set));
  const definition = { ...demo.definition, name: 'cars', data: { csv, target: set.target, task: 'regression', validationFraction: 0.2, testFraction: 0.2, splitSeed: 1 }, goal: { metric: 'rmse', better: 'lower' } };
  return { name: 'cars', definition, csv, target: set.target, metric: 'rmse' };
}

/** The exported winner's test score: `predict` on the test rows of the CSV. */
async function testScore(comparison: Comparison, exportDir: string, split: SplitRecord): Promise<number> {
  const table = await readCsv(comparison.csv);
  const rows: InputRow[] = split.test.map((row) => table.rows[row - 1]!);
  const model = await loadModel(exportDir);
  const predictions = predict(model, rows);
  const classes = model.configuration.recipe.classes;
  model.dispose();
  const truth = rows.map((row) => row[comparison.target]!);
  if (comparison.metric === 'rmse') {
    const errors = (predictions as ValuePrediction[]).map((p, i) => (p.predicted - Number(truth[i])) ** 2);
    return Math.sqrt(errors.reduce((a, b) => a + b, 0) / errors.length);
  }
  const positive = classes![1]!;
  return auc(truth.map((t) => (t === positive ? 1 : 0)), (predictions as ClassPrediction[]).map((p) => p.probabilities[positive]!));
}

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const middle = sorted.length >> 1;
  return sorted.length % 2 ? sorted[middle]! : (sorted[middle - 1]! + sorted[middle]!) / 2;
}

/** The space's encoding settings given on the command line (`--scale`, `--bins`), for the encoding that uses each. */
function settingsFor(encoding: string): Record<string, number> {
  const scale = option('--scale', '');
  const bins = option('--bins', '');
  if (encoding === 'periodic' && scale !== '') return { periodicScale: Number(scale) };
  if (encoding === 'piecewise-linear' && bins !== '') return { encodingBins: Number(bins) };
  return {};
}

async function compareOne(comparison: Comparison, encoding: string, seed: number, folder: string, threads: number): Promise<string> {
  const settings = settingsFor(encoding);
  const label = `${encoding}${Object.values(settings).map((value) => ` ${value}`).join('')}`;
  const out = path.join(folder, `${comparison.name}-${label.replace(' ', '-')}-seed${seed}`);
  const space = { ...comparison.definition.space, numericEncoding: [encoding], ...settings };
  const definition = { ...comparison.definition, name: `${comparison.name}-${encoding}`, space, data: { ...comparison.definition.data, splitSeed: seed } };
  const started = Date.now();
  const outcome = await run({ definition: definition as unknown as StudyDefinitionInput, baseDir: folder, out, threads, force: true, progress: false });
  const seconds = (Date.now() - started) / 1000;
  const split = JSON.parse(await readFile(path.join(out, 'splits.json'), 'utf8')) as SplitRecord;
  const exported = await exportModel({ dir: out, out: path.join(out, 'export', 'rank-1') });
  const test = await testScore(comparison, exported.out, split);
  const scores = outcome.doc.trials.flatMap((trial) => (typeof trial.score === 'number' ? [trial.score] : []));
  const winner = outcome.ranking[0]!.trial;
  return `${comparison.name} seed ${seed} ${label.padEnd(20)} test ${comparison.metric} ${test.toFixed(4)}  validation ${comparison.metric}: winner ${winner.score!.toFixed(4)}, median of ${scores.length} ${median(scores).toFixed(4)}  winner depth ${winner.configuration.depth} width ${winner.configuration.width}  ${seconds.toFixed(0)} s`;
}

function option(name: string, fallback: string): string {
  const index = process.argv.indexOf(name);
  return index >= 0 ? process.argv[index + 1]! : fallback;
}

async function main(): Promise<void> {
  const names = option('--sets', 'demo,cars').split(',');
  const seeds = option('--seeds', '1').split(',').map(Number);
  const threads = Number(option('--threads', '2'));
  const encodings = option('--encodings', NUMERIC_ENCODINGS.join(',')).split(',');
  const folder = path.join(tmpdir(), 'rungwise-encoding-comparison');
  await mkdir(folder, { recursive: true });
  const demo = await demoComparison();
  for (const name of names) {
    const comparison = name === 'demo' ? demo : await carsComparison(folder, demo);
    for (const seed of seeds) for (const encoding of encodings) console.log(await compareOne(comparison, encoding, seed, folder, threads));
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  main().catch((error: unknown) => {
    console.error(error instanceof Error ? error.message : error);
    process.exitCode = 1;
  });
}
