import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { prepareData, toSharedDataset } from '../src/data/prepare.js';
import { meanAndStd } from '../src/data/recipe.js';
import { dataSchema, type DataSettings } from '../src/study/definition.js';

let folder: string;
let studyFile: string;

beforeAll(async () => {
  folder = await mkdtemp(path.join(tmpdir(), 'rungwise-prepare-'));
  await mkdir(path.join(folder, 'study'));
  await mkdir(path.join(folder, 'data'));
  studyFile = path.join(folder, 'study', 'study.json');
});
afterAll(async () => {
  await rm(folder, { recursive: true, force: true });
});

/** Writes `data/<name>` beside the study folder and returns settings pointing at it ('../data/<name>'). */
async function withCsv(name: string, text: string, settings: Partial<DataSettings> & Pick<DataSettings, 'target' | 'task'>): Promise<DataSettings> {
  await writeFile(path.join(folder, 'data', name), text);
  return dataSchema.parse({ csv: `../data/${name}`, ...settings });
}

/** 20 rows: size 1..20, colour cycling red/green/blue with a gap every 7th row, class a (12) or b (8). */
function twoClassCsv(): string {
  const lines = ['size,colour,kind'];
  for (let i = 1; i <= 20; i++) lines.push(`${i},${i % 7 === 0 ? 'NA' : ['red', 'green', 'blue'][i % 3]},${i % 5 < 3 ? 'a' : 'b'}`);
  return lines.join('\n') + '\n';
}

describe('prepareData', () => {
  it('splits, encodes and summarises a CSV found relative to the study file', async () => {
    const settings = await withCsv('two.csv', twoClassCsv(), { target: 'kind', task: 'binary', splitSeed: 3 });
    const { data, summary } = await prepareData(settings, studyFile);
    expect(summary).toMatchObject({ rows: 20, columns: 3, trainRows: 13, validationRows: 4, testRows: 3, inputCount: 4, missingValues: 2 });
    expect(summary.classCounts).toEqual({ a: 12, b: 8 });
    expect(data.recipe.classes).toEqual(['a', 'b']);
    expect(data.train.x.length).toBe(13 * 4);
    expect(data.validation.y.length).toBe(4);
    // Lines are CSV lines: row i (1-based) sits on line i + 1.
    expect(Array.from(data.test.lines!).every((line) => line >= 2 && line <= 21)).toBe(true);
  });

  it('builds the recipe from training rows only', async () => {
    const settings = await withCsv('two.csv', twoClassCsv(), { target: 'kind', task: 'binary', splitSeed: 3 });
    const { data } = await prepareData(settings, studyFile);
    const trainingSizes = Array.from(data.train.lines!, (line) => line - 1);
    const expected = meanAndStd(trainingSizes);
    expect(data.recipe.features[0]).toMatchObject({ name: 'size', ...expected });
    expect(expected.mean).not.toBe(10.5); // the whole file's mean of 1..20
  });

  it('reads an omitted testFraction as the default 0.15 and accepts 0', async () => {
    const settings = await withCsv('two.csv', twoClassCsv(), { target: 'kind', task: 'binary', testFraction: 0 });
    const { summary } = await prepareData(settings, studyFile);
    expect([summary.trainRows, summary.validationRows, summary.testRows]).toEqual([16, 4, 0]);
  });

  it('standardises a regression target with the training split', async () => {
    const text = 'x,y\n' + Array.from({ length: 10 }, (_, i) => `${i},${2 * i + 1}`).join('\n');
    const settings = await withCsv('reg.csv', text, { target: 'y', task: 'regression' });
    const { data, summary } = await prepareData(settings, studyFile);
    expect(summary.classCounts).toBeUndefined();
    const trainingTargets = Array.from(data.train.lines!, (line) => 2 * (line - 2) + 1);
    expect(data.recipe.targetScaling).toEqual(meanAndStd(trainingTargets));
  });

  it('shares training and validation (never test) through SharedArrayBuffers', async () => {
    const settings = await withCsv('three.csv', 'v,k\n' + Array.from({ length: 30 }, (_, i) => `${i},${'xyz'[i % 3]}`).join('\n'), { target: 'k', task: 'multiclass' });
    const { data } = await prepareData(settings, studyFile);
    const shared = toSharedDataset(data, 'three');
    expect(shared).toMatchObject({ id: 'three', task: 'multiclass', inputCount: 1, outputCount: 3 });
    expect(shared.train.x.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(shared.validation.y.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(Array.from(shared.train.x)).toEqual(Array.from(data.train.x));
    expect(Object.keys(shared)).not.toContain('test');
    expect(shared.targetScaling).toBeUndefined();
  });

  it('encodes training and validation straight into shared memory, so sharing them copies nothing', async () => {
    const settings = await withCsv('three-b.csv', 'v,k\n' + Array.from({ length: 30 }, (_, i) => `${i},${'xyz'[i % 3]}`).join('\n'), { target: 'k', task: 'multiclass' });
    const { data } = await prepareData(settings, studyFile);
    expect(data.train.x.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(data.validation.y.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(data.test.x.buffer).not.toBeInstanceOf(SharedArrayBuffer);
    const shared = toSharedDataset(data, 'three-b');
    expect(shared.train.x).toBe(data.train.x);
    expect(shared.validation.x).toBe(data.validation.x);
    // A split that does not live in shared memory yet (a hand-built PreparedData) is copied there.
    const copied = toSharedDataset({ ...data, train: { ...data.train, x: Float32Array.from(data.train.x) } }, 'three-c');
    expect(copied.train.x.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(Array.from(copied.train.x)).toEqual(Array.from(data.train.x));
  });
});

describe('prepareData rejects settings that do not fit the CSV', () => {
  const study = (): string => studyFile;

  it('a target column not in the CSV', async () => {
    const settings = await withCsv('abc.csv', 'a,b,c\n1,2,3\n', { target: 'x', task: 'binary' });
    await expect(prepareData(settings, study())).rejects.toThrow(`${study()}: data.target: column 'x' is not in `);
    await expect(prepareData(settings, study())).rejects.toThrow(/abc\.csv \(columns: a, b, c\)$/);
  });

  it('a listed feature not in the CSV, suggesting the nearest column', async () => {
    const settings = await withCsv('two.csv', twoClassCsv(), { target: 'kind', task: 'binary', features: ['size', 'color'] });
    await expect(prepareData(settings, study())).rejects.toThrow(
      new RegExp(`^${study().replaceAll('.', '\\.')}: data\\.features\\[1\\]: column 'color' is not in .*two\\.csv \\(did you mean 'colour'\\?\\)`),
    );
  });

  it('the target listed as a feature', async () => {
    const settings = await withCsv('two.csv', twoClassCsv(), { target: 'kind', task: 'binary', features: ['kind'] });
    await expect(prepareData(settings, study())).rejects.toThrow("data.features[0]: 'kind' is the target column");
  });

  it('a missing CSV file', async () => {
    const settings = dataSchema.parse({ csv: 'nowhere.csv', target: 'y', task: 'binary' });
    await expect(prepareData(settings, study())).rejects.toThrow(`${study()}: data.csv: `);
    await expect(prepareData(settings, study())).rejects.toThrow(/nowhere\.csv not found/);
  });

  it('a row without a target value, naming the line', async () => {
    const settings = await withCsv('gap.csv', 'x,y\n1,a\n2,b\n3,\n4,a\n', { target: 'y', task: 'binary' });
    await expect(prepareData(settings, study())).rejects.toThrow(/gap\.csv: line 4: target 'y' is missing/);
  });

  it('a binary task with three classes', async () => {
    const settings = await withCsv('three.csv', 'v,k\n' + Array.from({ length: 30 }, (_, i) => `${i},${'xyz'[i % 3]}`).join('\n'), { target: 'k', task: 'binary' });
    await expect(prepareData(settings, study())).rejects.toThrow(/data\.task: 'binary' needs exactly 2 classes in column 'k' of .*three\.csv, found 3 \(x, y, z\); use 'multiclass'/);
  });

  it('a multiclass task with two classes, suggesting binary', async () => {
    const settings = await withCsv('two.csv', twoClassCsv(), { target: 'kind', task: 'multiclass' });
    await expect(prepareData(settings, study())).rejects.toThrow(/data\.task: 'multiclass' needs at least 3 classes .* found 2 \(a, b\); use 'binary'/);
  });

  it('a single class', async () => {
    const settings = await withCsv('one.csv', 'x,y\n1,a\n2,a\n3,a\n', { target: 'y', task: 'binary' });
    await expect(prepareData(settings, study())).rejects.toThrow(/data\.target: column 'y' of .*one\.csv has a single class \(a\)/);
  });

  it('text in a regression target, naming the line and the value', async () => {
    const settings = await withCsv('reg-text.csv', 'x,y\n1,2.5\n2,3\n3,high\n4,1\n', { target: 'y', task: 'regression' });
    await expect(prepareData(settings, study())).rejects.toThrow(/reg-text\.csv: line 4: target 'y' holds 'high', expected a number/);
  });

  it('a class too small for the stratified split', async () => {
    const rows = Array.from({ length: 20 }, (_, i) => `${i},${i < 2 ? 'rare' : 'common'}`);
    const settings = await withCsv('rare.csv', 'x,y\n' + rows.join('\n'), { target: 'y', task: 'binary' });
    await expect(prepareData(settings, study())).rejects.toThrow(
      /data: class 'rare' of column 'y' has 2 rows in .*rare\.csv; the stratified split into training, validation and test needs at least 3 rows of each class/,
    );
  });

  it('too few rows for the fractions', async () => {
    const settings = await withCsv('tiny.csv', 'x,y\n1,1\n2,2\n3,3\n', { target: 'y', task: 'regression' });
    await expect(prepareData(settings, study())).rejects.toThrow(/tiny\.csv: 3 rows are too few for validationFraction 0\.2 and testFraction 0\.15/);
  });

  it('reports CSV problems with the CSV line', async () => {
    const settings = await withCsv('ragged.csv', 'x,y\n1,a\n2\n', { target: 'y', task: 'binary' });
    await expect(prepareData(settings, study())).rejects.toMatchObject({ code: 'E_DATA', message: expect.stringMatching(/ragged\.csv: line 3: has 1 fields, the header has 2$/) });
  });
});
