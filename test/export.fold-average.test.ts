import { execFile } from 'node:child_process';
import { copyFile, mkdtemp, readFile, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import * as ort from 'onnxruntime-node';
import { beforeAll, describe, expect, it } from 'vitest';
import { decodeCheckpoint } from '../src/checkpoints/format.js';
import { decodeFoldBundle } from '../src/checkpoints/fold-bundle.js';
import { FolderCheckpointStore } from '../src/checkpoints/folder-store.js';
import { exportModel } from '../src/commands/export.js';
import { exportFoldAverage, type FoldAverageExportSummary } from '../src/commands/export-folds.js';
import { run } from '../src/commands/run.js';
import type { Task } from '../src/core/configuration.js';
import { rankTrials } from '../src/core/ranking.js';
import { readCsv, type CsvTable } from '../src/data/csv.js';
import { prepareData } from '../src/data/prepare.js';
import { encodeFeaturesChecked } from '../src/data/recipe.js';
import type { PreprocessingRecipe } from '../src/data/types.js';
import { columnLaidOutOtherwise } from '../src/export/ensemble-onnx.js';
import { loadModel, predict, type ClassPrediction, type LoadedModel, type ValuePrediction } from '../src/export/hand-off.js';
import { buildLayersModel, predictRows } from '../src/export/model-files.js';
import type { SplitRecord } from '../src/store/split-record.js';
import { StudyStore } from '../src/store/study-store.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { onnxInputs, TINY_STUDIES } from './helpers/exports.js';

const exec = promisify(execFile);
const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const TINY = path.join(ROOT, 'studies/tiny');
const CLI = path.join(ROOT, 'bin/rungwise.js');
const FOLDS = 3;


interface Case {
  task: Task;
  definition: string;
  runDir: string;
  table: CsvTable;
  /** The CSV's rows, then copies of the first rows with a blank category and a blank number (missing values). */
  rows: CsvTable['rows'];
  /** The CSV rows of the test split (from splits.json, 1-based data rows). */
  test: CsvTable['rows'];
  summary: FoldAverageExportSummary;
}

const cases: Case[] = [];

/** A tiny study's definition with `data.folds` = 3, written beside a copy of its CSV. */
async function foldStudy(root: string, definition: string, csv: string): Promise<string> {
  const folder = await mkdtemp(path.join(root, 'study-'));
  const parsed = JSON.parse(await readFile(path.join(TINY, definition), 'utf8')) as { $schema?: string; data: Record<string, unknown> };
  delete parsed.$schema;
  parsed.data.folds = FOLDS;
  await copyFile(path.join(TINY, csv), path.join(folder, csv));
  const file = path.join(folder, definition);
  await writeFile(file, JSON.stringify(parsed, null, 2));
  return file;
}

/** The CSV's rows and two rows with missing values: a blank category, then a blank first numeric column too. */
function withMissingRows(table: CsvTable, recipe: PreprocessingRecipe): CsvTable['rows'] {
  const category = recipe.features.find((feature) => feature.kind === 'categorical')!.name;
  const number = recipe.features.find((feature) => feature.kind === 'numeric')!.name;
  return [...table.rows, { ...table.rows[0]!, [category]: '' }, { ...table.rows[1]!, [category]: '', [number]: '' }];
}

/** The outputs `predict` gives: P(second class) for binary, one probability per class, or the value. */
function outputsOf(model: LoadedModel, rows: CsvTable['rows']): number[] {
  const answers = predict(model, rows);
  const { recipe } = model.configuration;
  const classes = recipe.classes ?? [];
  if (recipe.task === 'regression') return answers.map((a) => (a as ValuePrediction).predicted);
  if (recipe.task === 'binary') return answers.map((a) => (a as ClassPrediction).probabilities[classes[1]!]!);
  return answers.flatMap((a) => classes.map((c) => (a as ClassPrediction).probabilities[c]!));
}

beforeAll(async () => {
  const root = await mkdtemp(path.join(tmpdir(), 'rungwise-fold-average-'));
  for (const [task, definition, csv] of TINY_STUDIES) {
    const file = await foldStudy(root, definition, csv);
    const runDir = path.join(root, `${task}-run`);
    await run({ definition: file, out: runDir, progress: false });
    const summary = await exportFoldAverage({ dir: runDir, format: 'onnx' });
    const table = await readCsv(path.join(TINY, csv));
    const split = JSON.parse(await readFile(path.join(runDir, 'splits.json'), 'utf8')) as SplitRecord;
    cases.push({ task, definition: file, runDir, table, rows: withMissingRows(table, summary.ensemble.members[0]!.recipe!), test: split.test.map((row) => table.rows[row - 1]!), summary });
  }
});

describe('export --average-folds on the tiny studies with 3 folds', () => {
  it('keeps the fold networks of the best trials: each kept checkpoint is a bundle of 3 fold checkpoints of its trial', async () => {
    for (const c of cases) {
      const doc = await StudyStore.read(c.runDir);
      const store = new FolderCheckpointStore(c.runDir);
      const kept = await store.list();
      expect(kept.length, c.task).toBeGreaterThan(0);
      expect(kept, c.task).toContain(rankTrials(doc.trials, doc.goal)[0]!.trial.id);
      for (const trialId of kept) {
        const parts = decodeFoldBundle((await store.read(trialId))!, FOLDS);
        expect(parts.map((part) => decodeCheckpoint(part).manifest.trialId), c.task).toEqual([trialId, trialId, trialId]);
      }
    }
  });

  it("scores each fold network on its own fold as the study did: their mean is the trial's recorded score", async () => {
    for (const c of cases) {
      const doc = await StudyStore.read(c.runDir);
      const trial = doc.trials.find((t) => t.id === c.summary.trialId)!;
      const members = c.summary.ensemble.members;
      expect(members.map((m) => m.fold), c.task).toEqual([1, 2, 3]);
      const configuration = JSON.parse(await readFile(path.join(c.summary.out, 'configuration.json'), 'utf8')) as { trainedOn: string };
      expect(configuration.trainedOn, c.task).toBe('each fold network on the other folds of the training and validation splits');
      expect(members.map((m) => m.weight), c.task).toEqual([1 / 3, 1 / 3, 1 / 3]);
      const mean = members.reduce((sum, m) => sum + m.score, 0) / members.length;
      expect(mean, c.task).toBeCloseTo(trial.score!, 4);
    }
  });

  it("predicts the mean of the fold networks' outputs, each rebuilt from the checkpoint and its fold's recipe and run one by one", async () => {
    await initBackend();
    for (const c of cases) {
      const doc = await StudyStore.read(c.runDir);
      const trial = doc.trials.find((t) => t.id === c.summary.trialId)!;
      const parts = decodeFoldBundle((await new FolderCheckpointStore(c.runDir).read(trial.id))!, FOLDS);
      // The fold recipes as the study prepares them, not as the export recorded them.
      const { data } = await prepareData(doc.definition.data, c.definition, { foldSeed: doc.definition.sampler.seed });
      const expected: number[] = [];
      data.folds!.forEach((fold, i) => {
        const network = buildLayersModel(trial.configuration, fold.recipe, decodeCheckpoint(parts[i]!).network);
        const x = encodeFeaturesChecked(fold.recipe, c.rows as Record<string, string>[], 'rows').x;
        const outputs = predictRows(network, x, c.rows.length, fold.recipe.inputCount);
        network.dispose();
        Array.from(outputs).forEach((value, j) => (expected[j] = (expected[j] ?? 0) + value / FOLDS));
      });
      const model = await loadModel(c.summary.out);
      try {
        const averaged = outputsOf(model, c.rows);
        expect(averaged.length, c.task).toBe(expected.length);
        const scale = c.task === 'regression' ? 1e-4 * Math.max(...expected.map(Math.abs)) : 1e-5;
        averaged.forEach((value, j) => expect(Math.abs(value - expected[j]!), `${c.task} output ${j}`).toBeLessThan(scale));
      } finally {
        model.dispose();
      }
    }
  });

  it('writes one graph that onnxruntime runs to the outputs predict gives, missing values included (NaN in a missing category\'s inputs)', async () => {
    for (const c of cases) {
      const model = await loadModel(c.summary.out);
      try {
        const { recipe } = model.configuration;
        const table: CsvTable = { ...c.table, rows: c.rows, lines: c.rows.map((_, i) => i + 2) };
        const x = onnxInputs(recipe, table, 'nan');
        const session = await ort.InferenceSession.create(path.join(c.summary.out, 'model.onnx'));
        const result = await session.run({ features: new ort.Tensor('float32', x, [c.rows.length, recipe.inputCount]) });
        await session.release();
        const onnx = result.output!.data as Float32Array;
        const ours = outputsOf(model, c.rows);
        expect(onnx.length, c.task).toBe(ours.length);
        const scale = c.task === 'regression' ? 1e-4 * Math.max(...ours.map(Math.abs)) : 1e-5;
        ours.forEach((value, i) => expect(Math.abs(onnx[i]! - value), `${c.task} output ${i}`).toBeLessThan(scale));
      } finally {
        model.dispose();
      }
    }
  });

  it("takes NaN in a missing category's inputs as the fill category in a single network's model.onnx too", async () => {
    const c = cases[0]!;
    const single = await exportModel({ dir: c.runDir, format: 'onnx', out: path.join(c.runDir, 'export', 'single-onnx') });
    const model = await loadModel(single.out);
    const { recipe } = model.configuration;
    model.dispose();
    const table: CsvTable = { ...c.table, rows: c.rows, lines: c.rows.map((_, i) => i + 2) };
    const session = await ort.InferenceSession.create(path.join(single.out, 'model.onnx'));
    const outputs = async (x: Float32Array): Promise<Float32Array> => (await session.run({ features: new ort.Tensor('float32', x, [c.rows.length, recipe.inputCount]) })).output!.data as Float32Array;
    const withNan = await outputs(onnxInputs(recipe, table, 'nan'));
    const withFill = await outputs(onnxInputs(recipe, table, 'fill'));
    await session.release();
    expect(withNan.some(Number.isNaN)).toBe(false);
    expect(Array.from(withNan)).toEqual(Array.from(withFill));
  });

  it("records the average's test figure as its predictions on the split's CSV rows give it, and the retrained network's as a plain export gives it", async () => {
    for (const c of cases) {
      const model = await loadModel(c.summary.out);
      const target = model.configuration.recipe.target;
      const answers = predict(model, c.test);
      model.dispose();
      if (c.task === 'regression') {
        const rmse = Math.sqrt(answers.reduce((sum, a, r) => sum + ((a as ValuePrediction).predicted - Number(c.test[r]![target])) ** 2, 0) / c.test.length);
        expect(c.summary.ensemble.test?.rmse, c.task).toBeCloseTo(rmse, 4);
      } else {
        const accuracy = answers.filter((a, r) => a.predicted === c.test[r]![target]).length / c.test.length;
        expect(c.summary.ensemble.test?.accuracy, c.task).toBeCloseTo(accuracy, 10);
      }
      const plain = await exportModel({ dir: c.runDir, out: path.join(c.runDir, 'export', 'plain') });
      expect(plain.retrained, c.task).toBe(true);
      expect(c.summary.ensemble.winnerTest, c.task).toEqual(plain.test);
    }
  });
});

describe('export --average-folds through the command line', () => {
  it('runs a 3-fold study, exports its fold networks, prints both test figures and predicts with them', async () => {
    const c = cases[0]!;
    const runDir = path.join(path.dirname(c.definition), 'cli-run');
    await exec(process.execPath, [CLI, 'run', c.definition, '--out', runDir]);
    const out = path.join(runDir, 'export', 'cli-folds');
    const text = (await exec(process.execPath, [CLI, 'export', runDir, '--average-folds', '--out', out])).stdout;
    expect(text).toMatch(/exported the 3 fold networks of rank 1/);
    expect(text).toMatch(/test \(average\)/);
    expect(text).toMatch(/test \(retrained single network\)/);
    const printed = JSON.parse((await exec(process.execPath, [CLI, 'export', runDir, '--average-folds', '--out', out, '--json'])).stdout) as FoldAverageExportSummary;
    // The same study file and seed give the same fold networks as the library run above.
    expect(printed.ensemble.test).toEqual(c.summary.ensemble.test);
    expect(printed.ensemble.winnerTest).toEqual(c.summary.ensemble.winnerTest);
    const predicted = (await exec(process.execPath, [CLI, 'predict', out, path.join(path.dirname(c.definition), 'tiny.csv'), '--output', '-'])).stdout;
    const model = await loadModel(out);
    const answers = predict(model, c.table.rows);
    model.dispose();
    expect(predicted.trim().split('\n').slice(1).map((line) => line.split(',')[1])).toEqual(answers.map((a) => String(a.predicted)));
  });

  it('refuses a study without folds, and --retrain or --ensemble beside --average-folds, with exit 2 and one line', async () => {
    const c = cases[0]!;
    const plainRun = path.join(path.dirname(c.definition), 'no-folds-run');
    await run({ definition: path.join(TINY, 'study.json'), out: plainRun, progress: false });
    const refusals: [string, string[], RegExp][] = [
      [plainRun, [], /--average-folds needs a k-fold study \(data\.folds\)/],
      [c.runDir, ['--retrain'], /--average-folds .* does not take --retrain/],
      [c.runDir, ['--ensemble', '2'], /--average-folds .* give one of them/],
    ];
    for (const [dir, extra, message] of refusals) {
      const failed = await exec(process.execPath, [CLI, 'export', dir, '--average-folds', ...extra, '--out', path.join(dir, 'export', 'refused')]).then(
        () => undefined,
        (error: { code: number; stderr: string }) => error,
      );
      expect(failed?.code, extra.join(' ')).toBe(2);
      expect(failed?.stderr, extra.join(' ')).toMatch(message);
      expect(failed?.stderr.trim().split('\n'), extra.join(' ')).toHaveLength(1);
    }
  });
});

describe('one ONNX input for every fold network', () => {
  const recipe = (categories: string[], fill: string, pooled?: string[]): PreprocessingRecipe => ({
    task: 'binary',
    target: 't',
    classes: ['no', 'yes'],
    inputCount: 1 + categories.length + (pooled ? 1 : 0),
    features: [
      { kind: 'numeric', name: 'speed', mean: 1, std: 2 },
      { kind: 'categorical', name: 'site', categories, fill, ...(pooled ? { pooled } : {}) },
    ],
  });

  it('takes a fold recipe with other numeric figures or another fill, and names the column whose one-hot inputs differ', () => {
    const exported = recipe(['canal', 'reservoir'], 'canal');
    expect(columnLaidOutOtherwise(exported, { ...recipe(['canal', 'reservoir'], 'reservoir'), features: [{ kind: 'numeric', name: 'speed', mean: 3, std: 4 }, recipe(['canal', 'reservoir'], 'reservoir').features[1]!] })).toBeUndefined();
    expect(columnLaidOutOtherwise(exported, recipe(['canal'], 'canal'))).toBe('site');
    expect(columnLaidOutOtherwise(exported, recipe(['canal'], 'canal', ['reservoir']))).toBe('site');
  });
});
