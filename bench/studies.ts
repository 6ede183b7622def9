/** Temporary study definitions for the groups that drive `runStudy`. */
import { mkdtemp, readFile, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import path from 'node:path';
import type { StudyDefinitionInput } from '../src/study/definition.js';

export function tempDir(prefix: string): Promise<string> {
  return mkdtemp(path.join(tmpdir(), `rungwise-bench-${prefix}-`));
}

/** Writes `definition` as study.json in `dir` and returns its path. */
export async function writeDefinition(dir: string, definition: StudyDefinitionInput, file = 'study.json'): Promise<string> {
  const target = path.join(dir, file);
  await writeFile(target, JSON.stringify(definition, null, 2));
  return target;
}

const csvCell = (value: string): string => (/[",\r\n]/.test(value) ? `"${value.replaceAll('"', '""')}"` : value);

/** Palmer Penguins columns, as vega-datasets names them. */
const PENGUINS_COLUMNS = ['Species', 'Island', 'Beak Length (mm)', 'Beak Depth (mm)', 'Flipper Length (mm)', 'Body Mass (g)', 'Sex'] as const;

/**
 * Writes the Palmer Penguins data (344 rows, 3 species) from vega-datasets as CSV, nulls and the
 * one '.' Sex value as NA (the same conversion as test/helpers/datasets.ts).
 */
export async function writePenguinsCsv(dir: string): Promise<string> {
  const entry = createRequire(import.meta.url).resolve('vega-datasets');
  const source = path.resolve(path.dirname(entry), '..', 'data', 'penguins.json');
  const records = JSON.parse(await readFile(source, 'utf8')) as Record<string, string | number | null>[];
  const lines = [PENGUINS_COLUMNS.map(csvCell).join(',')];
  for (const record of records) {
    lines.push(PENGUINS_COLUMNS.map((column) => {
      const value = record[column];
      return value === null || value === undefined || value === '.' ? 'NA' : csvCell(String(value));
    }).join(','));
  }
  const file = path.join(dir, 'penguins.csv');
  await writeFile(file, lines.join('\n') + '\n');
  return file;
}

/** A small synthetic binary CSV (for studies whose workers do not train). */
export async function writeTinyCsv(dir: string, rows = 60): Promise<string> {
  const lines = ['a,b,label'];
  for (let i = 0; i < rows; i++) lines.push(`${i % 7},${(i * 3) % 11},${i % 2 ? 'yes' : 'no'}`);
  const file = path.join(dir, 'tiny.csv');
  await writeFile(file, lines.join('\n') + '\n');
  return file;
}
