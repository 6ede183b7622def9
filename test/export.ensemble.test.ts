import { execFile } from 'node:child_process';
import { mkdtemp, readFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import * as ort from 'onnxruntime-node';
import { beforeAll, describe, expect, it } from 'vitest';
import { exportModel } from '../src/commands/export.js';
import { exportEnsemble, type EnsembleExportSummary } from '../src/commands/export-ensemble.js';
import { predictCsv } from '../src/commands/predict.js';
import { run } from '../src/commands/run.js';
import type { Task } from '../src/core/configuration.js';
import { readCsv, type CsvTable } from '../src/data/csv.js';
import { onnxInputs, TINY_STUDIES } from './helpers/exports.js';
import { loadModel, predict, type ClassPrediction, type LoadedModel, type ValuePrediction } from '../src/export/hand-off.js';
import type { SplitRecord } from '../src/store/split-record.js';
import { StudyStore } from '../src/store/study-store.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';

const exec = promisify(execFile);
const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const TINY = path.join(ROOT, 'studies/tiny');
const CLI = path.join(ROOT, 'bin/rungwise.js');


interface Case {
  task: Task;
  runDir: string;
  table: CsvTable;
  /** The CSV rows of the test split (from splits.json, 1-based data rows). */
  test: CsvTable['rows'];
  summary: EnsembleExportSummary;
  /** Each library rank exported alone by `export --rank`, loaded. */
  singles: Map<number, LoadedModel>;
}

const cases: Case[] = [];

/** The outputs `predict` gives: P(second class) for binary, one probability per class, or the value. */
function outputsOf(model: LoadedModel, rows: CsvTable['rows']): number[] {
  const answers = predict(model, rows);
  const { recipe } = model.configuration;
  const classes = recipe.classes ?? [];
  if (recipe.task === 'regression') return answers.map((a) => (a as ValuePrediction).predicted);
  if (recipe.task === 'binary') return answers.map((a) => (a as ClassPrediction).probabilities[classes[1]!]!);
  return answers.flatMap((a) => classes.map((c) => (a as ClassPrediction).probabilities[c]!));
}

/** The test figure recomputed from the predictions and the CSV's own target cells: accuracy, or RMSE for regression. */
function testFigure(model: LoadedModel, rows: CsvTable['rows']): number {
  const target = model.configuration.recipe.target;
  const answers = predict(model, rows);
  if (model.configuration.recipe.task === 'regression') {
    return Math.sqrt(answers.reduce((sum, a, r) => sum + ((a as ValuePrediction).predicted - Number(rows[r]![target])) ** 2, 0) / rows.length);
  }
  return answers.filter((a, r) => a.predicted === rows[r]![target]).length / rows.length;
}

beforeAll(async () => {
  const root = await mkdtemp(path.join(tmpdir(), 'rungwise-ensemble-'));
  for (const [task, definition, csv] of TINY_STUDIES) {
    const runDir = path.join(root, task);
    await run({ definition: path.join(TINY, definition), out: runDir, progress: false });
    const summary = await exportEnsemble({ dir: runDir, size: 3, format: 'onnx' });
    const singles = new Map<number, LoadedModel>();
    for (const rank of summary.ensemble.library) singles.set(rank, await loadModel((await exportModel({ dir: runDir, rank, out: path.join(root, `${task}-rank-${rank}`) })).out));
    const table = await readCsv(path.join(TINY, csv));
    const split = JSON.parse(await readFile(path.join(runDir, 'splits.json'), 'utf8')) as SplitRecord;
    cases.push({ task, runDir, table, test: split.test.map((row) => table.rows[row - 1]!), summary, singles });
  }
});

describe('export --ensemble on the tiny studies', () => {
  it('scores each library network alone as the study recorded it', async () => {
    for (const c of cases) {
      const doc = await StudyStore.read(c.runDir);
      for (const member of c.summary.ensemble.members) {
        expect(member.score, `${c.task} trial ${member.trialId}`).toBeCloseTo(doc.trials.find((t) => t.id === member.trialId)!.score!, 4);
      }
      const weights = c.summary.ensemble.members.reduce((sum, m) => sum + m.weight, 0);
      expect(weights, c.task).toBeCloseTo(1, 10);
    }
  });

  it('chooses an ensemble no worse on validation than its best member alone (the selection keeps the best nested ensemble)', () => {
    for (const c of cases) {
      const { metric, better } = c.summary.goal;
      const ensemble = c.summary.ensemble.validation[metric]!;
      const bestAlone = c.summary.ensemble.members.map((m) => m.score).reduce((a, b) => (better === 'higher' ? Math.max(a, b) : Math.min(a, b)));
      if (better === 'higher') expect(ensemble, c.task).toBeGreaterThanOrEqual(bestAlone - 1e-6);
      else expect(ensemble, c.task).toBeLessThanOrEqual(bestAlone + 1e-6);
    }
  });

  it('predicts the weighted mean of its members, each exported alone', async () => {
    for (const c of cases) {
      const model = await loadModel(c.summary.out);
      try {
        expect(model.members?.length, c.task).toBe(c.summary.ensemble.members.length);
        // The tiny regression study's selection keeps more than one network (so the mean is exercised).
        if (c.task === 'regression') expect(c.summary.ensemble.members.length).toBeGreaterThan(1);
        const ensemble = outputsOf(model, c.table.rows);
        const expected = new Array<number>(ensemble.length).fill(0);
        for (const member of c.summary.ensemble.members) {
          outputsOf(c.singles.get(member.rank)!, c.table.rows).forEach((value, i) => (expected[i]! += member.weight * value));
        }
        ensemble.forEach((value, i) => expect(value, `${c.task} output ${i}`).toBeCloseTo(expected[i]!, 5));
      } finally {
        model.dispose();
      }
    }
  });

  it('reports the ensemble\'s and the single winner\'s test figures as their predictions on the split\'s CSV rows give them', async () => {
    for (const c of cases) {
      const metric = c.task === 'regression' ? 'rmse' : 'accuracy';
      const model = await loadModel(c.summary.out);
      try {
        expect(c.summary.ensemble.test?.[metric], c.task).toBeCloseTo(testFigure(model, c.test), 5);
      } finally {
        model.dispose();
      }
      expect(c.summary.ensemble.winnerTest?.[metric], c.task).toBeCloseTo(testFigure(c.singles.get(1)!, c.test), 5);
    }
  });

  it('writes one graph that onnxruntime runs to the same outputs', async () => {
    for (const c of cases) {
      const model = await loadModel(c.summary.out);
      try {
        const { recipe } = model.configuration;
        const x = onnxInputs(recipe, c.table);
        const session = await ort.InferenceSession.create(path.join(c.summary.out, 'model.onnx'));
        const result = await session.run({ features: new ort.Tensor('float32', x, [c.table.rows.length, recipe.inputCount]) });
        await session.release();
        const onnx = result.output!.data as Float32Array;
        const ours = outputsOf(model, c.table.rows);
        const scale = c.task === 'regression' ? 1e-4 * Math.max(...ours.map(Math.abs)) : 1e-5;
        ours.forEach((value, i) => expect(Math.abs(onnx[i]! - value), `${c.task} output ${i}`).toBeLessThan(scale));
      } finally {
        model.dispose();
      }
    }
  });

  it('predict writes the ensemble\'s classes, and the CLI prints both test figures and refuses bad sizes with exit 2', async () => {
    const c = cases[0]!;
    let csv = '';
    await predictCsv({ model: c.summary.out, data: path.join(TINY, 'tiny.csv'), output: '-', stdout: { write: (t: string) => (csv += t) } as unknown as NodeJS.WritableStream });
    const model = await loadModel(c.summary.out);
    const answers = predict(model, c.table.rows);
    model.dispose();
    expect(csv.trim().split('\n').slice(1).map((line) => line.split(',')[1])).toEqual(answers.map((a) => String(a.predicted)));
    const out = path.join(c.runDir, 'export', 'cli-ensemble');
    const { stdout } = await exec(process.execPath, [CLI, 'export', c.runDir, '--ensemble', '3', '--out', out, '--json']);
    const printed = JSON.parse(stdout) as EnsembleExportSummary;
    expect(printed.ensemble.test).toEqual(c.summary.ensemble.test);
    expect(printed.ensemble.winnerTest).toEqual(c.summary.ensemble.winnerTest);
    const text = (await exec(process.execPath, [CLI, 'export', c.runDir, '--ensemble', '2', '--out', out])).stdout;
    expect(text).toMatch(/test \(ensemble\)/);
    expect(text).toMatch(/test \(rank 1 alone/);
    expect(text).toMatch(/even more optimistic/);
    for (const [size, message] of [['1', /--ensemble must be a whole number from 2 up/], ['4', /rank 4 \(trial \d+\) has none/]] as const) {
      const failed = await exec(process.execPath, [CLI, 'export', c.runDir, '--ensemble', size, '--out', path.join(c.runDir, 'export', `refused-${size}`)]).then(
        () => undefined,
        (error: { code: number; stderr: string }) => error,
      );
      expect(failed?.code, size).toBe(2);
      expect(failed?.stderr, size).toMatch(message);
    }
  });
});


describe('export --ensemble of a study that searches preprocessing', () => {
  it('gives its members rank 1\'s numeric-input recipe, so the winner alone scores as `export` scores it', async () => {
    const root = await mkdtemp(path.join(tmpdir(), 'rungwise-ensemble-inputs-'));
    const { $schema: _schema, ...written } = JSON.parse(await readFile(path.join(TINY, 'study-regression.json'), 'utf8')) as StudyDefinitionInput & { $schema?: string };
    const definition: StudyDefinitionInput = { ...written, space: { ...written.space, numericInputs: ['robust-clip'] } };
    const runDir = path.join(root, 'run');
    await run({ definition, baseDir: TINY, out: runDir, progress: false });
    const summary = await exportEnsemble({ dir: runDir, size: 3 });
    const single = await loadModel((await exportModel({ dir: runDir, rank: 1, out: path.join(root, 'rank-1') })).out);
    const ensemble = await loadModel(summary.out);
    try {
      const table = await readCsv(path.join(TINY, 'tiny-regression.csv'));
      const split = JSON.parse(await readFile(path.join(runDir, 'splits.json'), 'utf8')) as SplitRecord;
      const test = split.test.map((row) => table.rows[row - 1]!);
      expect(summary.ensemble.members.every((member) => member.configuration.numericInputs === 'robust-clip')).toBe(true);
      expect(ensemble.configuration.recipe).toEqual(single.configuration.recipe);
      expect(summary.ensemble.winnerTest?.rmse).toBeCloseTo(testFigure(single, test), 5);
      expect(summary.ensemble.test?.rmse).toBeCloseTo(testFigure(ensemble, test), 5);
    } finally {
      single.dispose();
      ensemble.dispose();
    }
  });
});
