import { stat } from 'node:fs/promises';
import path from 'node:path';
import { UserError } from '../errors.js';
import type { SharedDataset } from '../pool/messages.js';
import type { DataSettings } from '../study/definition.js';
import { didYouMean } from '../text/nearest.js';
import { isMissing, parseNumber, readCsv, type CsvTable } from './csv.js';
import { buildRecipe, columnKind, encodeFeatures, encodeTarget, sortLabels, type FeatureColumn } from './recipe.js';
import { splitRows, splitSizes } from './split.js';
import type { DataSummary, PreparedData, SplitArrays } from './types.js';

function studyError(definitionFile: string, field: string, message: string): UserError {
  return new UserError('E_DATA', `${definitionFile}: ${field}: ${message}`);
}

/** The feature columns in use: the listed ones (checked against the CSV), else every column but the target. */
function featureNames(settings: DataSettings, table: CsvTable, definitionFile: string): string[] {
  if (settings.features === undefined) return table.columns.filter((name) => name !== settings.target);
  const seen = new Set<string>();
  settings.features.forEach((name, index) => {
    const field = `data.features[${index}]`;
    if (!table.columns.includes(name)) {
      throw studyError(definitionFile, field, `column '${name}' is not in ${table.file}${didYouMean(name, table.columns)} (columns: ${table.columns.join(', ')})`);
    }
    if (name === settings.target) throw studyError(definitionFile, field, `'${name}' is the target column; a feature cannot also be the target`);
    if (seen.has(name)) throw studyError(definitionFile, field, `'${name}' is listed twice`);
    seen.add(name);
  });
  return [...settings.features];
}

/** Checks every target value against the task; returns the class labels (classification) in output order. */
function checkTarget(settings: DataSettings, table: CsvTable, definitionFile: string): string[] | undefined {
  const { target, task } = settings;
  table.rows.forEach((row, r) => {
    const value = row[target]!;
    const where = `${table.file}: line ${table.lines[r]}: target '${target}'`;
    // Rows without a target are reported rather than dropped: silently losing rows would change the data set.
    if (isMissing(value)) throw new UserError('E_DATA', `${where} is missing; every row needs a target value (remove or fill the row)`);
    if (task === 'regression' && parseNumber(value) === undefined) {
      throw new UserError('E_DATA', `${where} holds '${value}', expected a number for task 'regression'`);
    }
  });
  if (task === 'regression') return undefined;

  const classes = sortLabels(table.rows.map((row) => row[target]!));
  const found = `found ${classes.length} (${classes.slice(0, 10).join(', ')}${classes.length > 10 ? ', ...' : ''})`;
  if (classes.length < 2) {
    throw studyError(definitionFile, 'data.target', `column '${target}' of ${table.file} has a single class (${classes[0]}); a classifier needs at least 2`);
  }
  if (task === 'binary' && classes.length !== 2) {
    throw studyError(definitionFile, 'data.task', `'binary' needs exactly 2 classes in column '${target}' of ${table.file}, ${found}; use 'multiclass'`);
  }
  if (task === 'multiclass' && classes.length < 3) {
    throw studyError(definitionFile, 'data.task', `'multiclass' needs at least 3 classes in column '${target}' of ${table.file}, ${found}; use 'binary'`);
  }
  return classes;
}

function classCounts(table: CsvTable, target: string, classes: readonly string[]): Record<string, number> {
  const counts: Record<string, number> = Object.fromEntries(classes.map((label) => [label, 0]));
  for (const row of table.rows) counts[row[target]!]! += 1;
  return counts;
}

function splitArrays(table: CsvTable, indices: readonly number[], encode: (rows: Record<string, string>[], lines: number[]) => { x: Float32Array; y: Float32Array }): SplitArrays {
  const rows = indices.map((i) => table.rows[i]!);
  const lines = indices.map((i) => table.lines[i]!);
  return { rows: rows.length, ...encode(rows, lines), lines: Int32Array.from(lines) };
}

/** The CSV path for messages: relative to the working directory when inside it, else absolute. */
function displayPath(file: string): string {
  const relative = path.relative(process.cwd(), file);
  return relative !== '' && !relative.startsWith('..') && !path.isAbsolute(relative) ? relative : file;
}

/**
 * Reads the study's CSV (path relative to the definition file's folder), checks it against the
 * settings, splits it and encodes every split with a recipe built from the training split alone.
 * Rows whose target is missing are an error (naming the line), not silently dropped.
 * @throws UserError (E_DATA) with one line naming the study field or the CSV line.
 */
export async function prepareData(settings: DataSettings, definitionFile: string): Promise<{ data: PreparedData; summary: DataSummary }> {
  const csvFile = displayPath(path.resolve(path.dirname(definitionFile), settings.csv));
  const found = await stat(csvFile).then(
    () => true,
    () => false,
  );
  if (!found) throw studyError(definitionFile, 'data.csv', `${csvFile} not found (the path is relative to the study file's folder)`);
  const table = await readCsv(csvFile);
  const { target, task } = settings;
  if (!table.columns.includes(target)) {
    throw studyError(definitionFile, 'data.target', `column '${target}' is not in ${table.file} (columns: ${table.columns.join(', ')})`);
  }
  const names = featureNames(settings, table, definitionFile);
  if (names.length === 0) throw studyError(definitionFile, 'data.features', `${table.file} has no column besides the target '${target}'`);
  const classes = checkTarget(settings, table, definitionFile);

  const fractions = { validationFraction: settings.validationFraction, testFraction: settings.testFraction };
  let counts: Record<string, number> | undefined;
  if (classes !== undefined) {
    counts = classCounts(table, target, classes);
    const splits = splitSizes({ rows: table.rows.length, ...fractions, file: table.file }).filter((size) => size > 0).length;
    const small = classes.find((label) => counts![label]! < splits);
    if (small !== undefined) {
      throw studyError(
        definitionFile,
        'data',
        `class '${small}' of column '${target}' has ${counts[small]} row${counts[small] === 1 ? '' : 's'} in ${table.file}; ` +
          `the stratified split into ${splits === 3 ? 'training, validation and test' : 'training and validation'} needs at least ${splits} rows of each class`,
      );
    }
  }

  const indices = splitRows({
    rows: table.rows.length,
    ...(classes === undefined ? {} : { strata: table.rows.map((row) => row[target]!) }),
    ...fractions,
    splitSeed: settings.splitSeed,
    file: table.file,
  });
  const features: FeatureColumn[] = names.map((name) => ({ name, kind: columnKind(table.rows.map((row) => row[name]!)) }));
  const recipe = buildRecipe({ task, target, features, trainingRows: indices.train.map((i) => table.rows[i]!) });
  const encode = (rows: Record<string, string>[], lines: number[]): { x: Float32Array; y: Float32Array } => ({
    x: encodeFeatures(recipe, rows, table.file, lines),
    y: encodeTarget(recipe, rows.map((row) => row[target]!), table.file, lines),
  });
  const data: PreparedData = {
    recipe,
    train: splitArrays(table, indices.train, encode),
    validation: splitArrays(table, indices.validation, encode),
    test: splitArrays(table, indices.test, encode),
  };

  let missingValues = 0;
  for (const row of table.rows) for (const name of names) if (isMissing(row[name]!)) missingValues++;
  const summary: DataSummary = {
    file: table.file,
    rows: table.rows.length,
    columns: table.columns.length,
    trainRows: data.train.rows,
    validationRows: data.validation.rows,
    testRows: data.test.rows,
    inputCount: recipe.inputCount,
    missingValues,
  };
  if (counts !== undefined) summary.classCounts = counts;
  return { data, summary };
}

function shared(values: Float32Array): Float32Array {
  const copy = new Float32Array(new SharedArrayBuffer(values.byteLength));
  copy.set(values);
  return copy;
}

/**
 * Copies the training and validation splits into SharedArrayBuffers for the workers.
 * The test split is left out on purpose: it never reaches a worker.
 */
export function toSharedDataset(data: PreparedData, id: string): SharedDataset {
  const { recipe } = data;
  const dataset: SharedDataset = {
    id,
    task: recipe.task,
    inputCount: recipe.inputCount,
    outputCount: recipe.task === 'multiclass' ? (recipe.classes?.length ?? 0) : 1,
    train: { rows: data.train.rows, x: shared(data.train.x), y: shared(data.train.y) },
    validation: { rows: data.validation.rows, x: shared(data.validation.x), y: shared(data.validation.y) },
  };
  if (recipe.targetScaling !== undefined) dataset.targetScaling = { ...recipe.targetScaling };
  return dataset;
}
