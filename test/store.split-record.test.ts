import { parse } from 'csv-parse/sync';
import { mkdtemp, readFile, rm, unlink, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { exportModel } from '../src/commands/export.js';
import { UserError } from '../src/core/errors.js';
import { loadModel, predict } from '../src/export/hand-off.js';
import { runStudy } from '../src/runner/run-study.js';
import { resumeStudy } from '../src/runner/resume-study.js';
import { rankTrials } from '../src/core/ranking.js';
import { runPaths } from '../src/store/run-dir.js';
import { ROW_NUMBERING, readSplitRecord, type SplitRecord } from '../src/store/split-record.js';
import { StudyStore } from '../src/store/study-store.js';
import type { StudyDocument } from '../src/store/types.js';
import { IRIS_TARGET, writeIrisCsv } from './helpers/datasets.js';

let root: string;
let runDir: string;
let studyFile: string;
let csvRows: Record<string, string>[];
let record: SplitRecord;
let doc: StudyDocument;

const irisStudy = (name: string): object => ({
  name,
  data: { csv: 'iris.csv', target: IRIS_TARGET, task: 'multiclass', splitSeed: 5 },
  space: { depth: { min: 1, max: 1 }, width: { min: 8, max: 8 }, activation: ['tanh'], learningRate: { min: 0.02, max: 0.05 }, batchSize: [16], optimizer: ['adam'] },
  budget: { trials: 2, maxEpochs: 6 },
  sampler: { kind: 'random', seed: 3 },
  threads: 1,
});

beforeAll(async () => {
  root = await mkdtemp(path.join(tmpdir(), 'rungwise-splits-'));
  const csv = await writeIrisCsv(root);
  studyFile = path.join(root, 'study.json');
  await writeFile(studyFile, JSON.stringify(irisStudy('iris-splits')));
  runDir = path.join(root, 'run');
  await runStudy(studyFile, { out: runDir });
  record = (await readSplitRecord(runDir))!;
  doc = await StudyStore.read(runDir);
  // An outside reader of the CSV: csv-parse's own synchronous API, one object per data row.
  csvRows = parse(await readFile(csv, 'utf8'), { columns: true, skip_empty_lines: true }) as Record<string, string>[];
}, 120_000);

afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

describe('splits.json, the record of which rows went where', () => {
  it('is written into the run directory with its format, the CSV hash, the split settings and how rows are numbered', async () => {
    expect(record.format).toBe('rungwise-splits');
    expect(record.version).toBe(1);
    expect(record.rows).toBe(ROW_NUMBERING);
    expect(record.csv.sha256).toBe(doc.dataHashes!.csv);
    expect(record.csv.dataRows).toBe(150);
    expect(record.split).toEqual({ splitSeed: 5, validationFraction: 0.2, testFraction: 0.15, stratifiedBy: IRIS_TARGET });
    expect([record.training.length, record.validation.length, record.test.length]).toEqual([doc.data.trainRows, doc.data.validationRows, doc.data.testRows]);
    // Compact: each array of row numbers on one line.
    const text = await readFile(runPaths.splitRecord(runDir), 'utf8');
    expect(text).toMatch(/"validation": \[\d+(,\d+)+\]/);
  });

  it('numbers rows 1..n over the data rows: the splits are disjoint and together hold every row once', () => {
    const all = [...record.training, ...record.validation, ...record.test].sort((a, b) => a - b);
    expect(all).toEqual(Array.from({ length: 150 }, (_, i) => i + 1));
  });

  it('keeps each class in every split in the proportions of the whole, within one row', () => {
    // Source: Kohavi, "A Study of Cross-Validation and Bootstrap for Accuracy Estimation and Model Selection", IJCAI 1995, section 3 (stratification: each part holds about the proportions of the whole).
    const labelOf = (row: number): string => csvRows[row - 1]![IRIS_TARGET]!;
    for (const split of [record.training, record.validation, record.test]) {
      for (const label of ['setosa', 'versicolor', 'virginica']) {
        const count = split.filter((row) => labelOf(row) === label).length;
        expect(Math.abs(count - (split.length * 50) / 150)).toBeLessThanOrEqual(1);
      }
    }
  });

  it('re-selects the rows the study scored: the validation rows read from the CSV give the classes and the accuracy the study recorded', async () => {
    const best = rankTrials(doc.trials, doc.goal)[0]!.trial;
    const classes = doc.recipe.classes!;
    const validationRows = record.validation.map((row) => csvRows[row - 1]!);
    // The study's confusion matrix counts the validation rows of each true class.
    const perClass = classes.map((label) => validationRows.filter((row) => row[IRIS_TARGET] === label).length);
    expect(best.classFigures!.confusion.map((row) => row.reduce((a, b) => a + b, 0))).toEqual(perClass);
    // Re-scored with the exported model on those rows, the accuracy is the one the study recorded.
    const summary = await exportModel({ dir: runDir });
    const copy = JSON.parse(await readFile(path.join(summary.out, 'splits.json'), 'utf8')) as SplitRecord;
    expect(copy.validation).toEqual(record.validation);
    const model = await loadModel(summary.out);
    try {
      const predictions = predict(model, validationRows);
      const correct = predictions.filter((p, i) => 'probabilities' in p && p.predicted === validationRows[i]![IRIS_TARGET]).length;
      expect(correct / validationRows.length).toBeCloseTo(best.curve.at(-1)!.metrics.accuracy!, 6);
    } finally {
      model.dispose();
    }
  }, 60_000);
});

describe('resume and the split record', () => {
  let dir: string;
  let file: string;

  beforeAll(async () => {
    file = path.join(root, 'interrupted.json');
    await writeFile(file, JSON.stringify(irisStudy('iris-interrupted')));
    dir = path.join(root, 'interrupted');
    const stop = new AbortController();
    // Interrupted as soon as it starts: the study is saved unfinished with its split record.
    await runStudy(file, { out: dir, signal: stop.signal, onEvent: (event) => event.type === 'study-started' && stop.abort() });
    expect((await StudyStore.read(dir)).state).toBe('interrupted');
  }, 60_000);

  it('refuses a record whose rows were changed, with one line naming the file and what differs (exit code 2)', async () => {
    const original = await readFile(runPaths.splitRecord(dir), 'utf8');
    const tampered = JSON.parse(original) as SplitRecord;
    [tampered.validation[0], tampered.training[0]] = [tampered.training[0]!, tampered.validation[0]!];
    await writeFile(runPaths.splitRecord(dir), JSON.stringify(tampered));
    const error = await resumeStudy(dir).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(UserError);
    expect((error as UserError).exitCode).toBe(2);
    expect((error as UserError).code).toBe('E_SPLIT_CHANGED');
    expect((error as UserError).message).toContain(runPaths.splitRecord(dir));
    expect((error as UserError).message).toMatch(/the training rows differ/);
    expect((error as UserError).message).not.toContain('\n');
    expect((await StudyStore.read(dir)).state).toBe('interrupted');
    await writeFile(runPaths.splitRecord(dir), original);
  }, 60_000);

  it('writes the record for a study from before it (no splits.json), equal to the one the run wrote', async () => {
    const original = await readFile(runPaths.splitRecord(dir), 'utf8');
    await unlink(runPaths.splitRecord(dir));
    const notes: string[] = [];
    const stop = new AbortController();
    await resumeStudy(dir, { signal: stop.signal, onEvent: (event) => {
      if (event.type === 'note') notes.push(event.message);
      if (event.type === 'study-started') stop.abort();
    } });
    expect(await readFile(runPaths.splitRecord(dir), 'utf8')).toBe(original);
    expect(notes.some((n) => n.includes('wrote splits.json'))).toBe(true);
  }, 60_000);
});
