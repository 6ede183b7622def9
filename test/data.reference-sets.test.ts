import { rm } from 'node:fs/promises';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readCsv } from '../src/data/csv.js';
import { prepareData } from '../src/data/prepare.js';
import { dataSchema } from '../src/study/definition.js';
import { IRIS_FEATURES, IRIS_TARGET, makeTempDir, PENGUINS_COLUMNS, PENGUINS_MEASUREMENTS, PENGUINS_TARGET, writeIrisCsv, writePenguinsCsv } from './helpers/datasets.js';

let folder: string;
let irisFile: string;
let penguinsFile: string;

beforeAll(async () => {
  folder = await makeTempDir();
  irisFile = await writeIrisCsv(folder);
  penguinsFile = await writePenguinsCsv(folder);
});
afterAll(async () => {
  await rm(folder, { recursive: true, force: true });
});

/** A study file path in the same folder, so the CSV path in the settings is just the file name. */
const studyIn = (file: string): string => path.join(path.dirname(file), 'study.json');

describe("Fisher's Iris helper", () => {
  it('writes 150 rows, 4 numeric features and 3 classes of 50', async () => {
    const table = await readCsv(irisFile);
    expect(table.columns).toEqual([...IRIS_FEATURES, IRIS_TARGET]);
    // Source: Fisher (1936) via UCI Machine Learning Repository, iris.names: 150 instances, 50 per class (REFERENCES.md, confirmed).
    expect(table.rows).toHaveLength(150);
    const counts: Record<string, number> = {};
    for (const row of table.rows) counts[row[IRIS_TARGET]!] = (counts[row[IRIS_TARGET]!] ?? 0) + 1;
    expect(counts).toEqual({ setosa: 50, versicolor: 50, virginica: 50 });
  });

  it('prepares as a multiclass data set with stratified splits', async () => {
    const settings = dataSchema.parse({ csv: path.basename(irisFile), target: IRIS_TARGET, task: 'multiclass' });
    const { data, summary } = await prepareData(settings, studyIn(irisFile));
    expect(summary).toMatchObject({ rows: 150, columns: 5, inputCount: 4, missingValues: 0, trainRows: 97, validationRows: 30, testRows: 23 });
    expect(data.recipe.classes).toEqual(['setosa', 'versicolor', 'virginica']);
    expect(data.recipe.features.every((f) => f.kind === 'numeric')).toBe(true);
    // Stratified: 50 rows per class split 0.65 / 0.2 / 0.15 gives 10 validation rows of each class.
    const validationCounts = [0, 0, 0];
    for (const label of data.validation.y) validationCounts[label]!++;
    expect(validationCounts).toEqual([10, 10, 10]);
  });
});

describe('Palmer Penguins helper', () => {
  it('writes 344 rows: Adelie 152, Chinstrap 68, Gentoo 124', async () => {
    const table = await readCsv(penguinsFile);
    expect(table.columns).toEqual([...PENGUINS_COLUMNS]);
    // Source: Horst, Hill, Gorman, palmerpenguins (2020), doi:10.5281/zenodo.3960218 (REFERENCES.md, confirmed).
    expect(table.rows).toHaveLength(344);
    const counts: Record<string, number> = {};
    for (const row of table.rows) counts[row[PENGUINS_TARGET]!] = (counts[row[PENGUINS_TARGET]!] ?? 0) + 1;
    expect(counts).toEqual({ Adelie: 152, Chinstrap: 68, Gentoo: 124 });
  });

  it('writes missing values as NA: 2 rows lack every measurement, 11 rows lack something', async () => {
    const table = await readCsv(penguinsFile);
    // Source: Horst, Hill, Gorman (2020), palmerpenguins CSV as summarised in REFERENCES.md (confirmed).
    expect(table.rows.filter((row) => PENGUINS_MEASUREMENTS.every((name) => row[name] === 'NA'))).toHaveLength(2);
    expect(table.rows.filter((row) => PENGUINS_COLUMNS.some((name) => row[name] === 'NA'))).toHaveLength(11);
    expect(table.rows.some((row) => row[PENGUINS_TARGET] === 'NA')).toBe(false);
  });

  it('prepares with missing measurements imputed, one-hot islands and sexes', async () => {
    const settings = dataSchema.parse({ csv: path.basename(penguinsFile), target: PENGUINS_TARGET, task: 'multiclass' });
    const { data, summary } = await prepareData(settings, studyIn(penguinsFile));
    // Every row has a species, so no row is dropped or reported.
    expect(summary).toMatchObject({ rows: 344, trainRows: 223, validationRows: 69, testRows: 52 });
    expect(summary.classCounts).toEqual({ Adelie: 152, Chinstrap: 68, Gentoo: 124 });
    // 2 rows x 5 (4 measurements + Sex) + 9 further rows missing Sex only.
    expect(summary.missingValues).toBe(19);
    expect(data.recipe.features.map((f) => f.kind)).toEqual(['categorical', 'numeric', 'numeric', 'numeric', 'numeric', 'categorical']);
    expect(data.recipe.features[0]).toMatchObject({ categories: ['Biscoe', 'Dream', 'Torgersen'] });
    expect(data.recipe.features[5]).toMatchObject({ categories: ['FEMALE', 'MALE'] });
    // 3 islands + 4 measurements + 2 sexes
    expect(data.recipe.inputCount).toBe(9);
    for (const split of [data.train, data.validation, data.test]) expect(split.x.every(Number.isFinite)).toBe(true);
  });

  it('prepares on the four body measurements only', async () => {
    const settings = dataSchema.parse({ csv: path.basename(penguinsFile), target: PENGUINS_TARGET, task: 'multiclass', features: [...PENGUINS_MEASUREMENTS] });
    const { data, summary } = await prepareData(settings, studyIn(penguinsFile));
    expect(summary.inputCount).toBe(4);
    expect(summary.missingValues).toBe(8);
    expect(data.train.x.every(Number.isFinite)).toBe(true);
  });
});
