import { stat } from 'node:fs/promises';
import path from 'node:path';
import { setImmediate as nextTurn } from 'node:timers/promises';
import { UserError } from '../core/errors.js';
import type { SharedDataset } from '../core/job.js';
import { DEFAULT_ENCODING_SETTINGS, DEFAULT_PREPROCESSING, preprocessingKey, type EncodingSettings, type PreprocessingChoice } from '../core/configuration.js';
import type { DataSettings } from '../study/definition.js';
import { didYouMean } from '../text/nearest.js';
import { checkClassWeightLabels, trainingClassWeights } from './class-weights.js';
import { costMatrixFor } from './costs.js';
import { checkFeatureColumns } from './feature-checks.js';
import { isMissing } from './csv.js';
import { ColumnSink, type ColumnTable, type RawColumn } from './columns.js';
import type { DataEvent, DataLoadOptions } from './events.js';
import { buildColumnRecipe, encodeColumns, encodeTargetValues, sortLabels, type NumericEncodingContext, type TargetValues } from './recipe.js';
import { delimiterName, streamCsv } from './source.js';
import { splitRows, splitSizes } from './split.js';
import { categoricalValues, typeColumn } from './typing.js';
import { assignFolds, otherFolds } from './folds.js';
import type { DataSummary, PreparedData, PreparedFold, PreprocessingRecipe, SplitArrays } from './types.js';
import type { FeatureValues } from './values.js';

function studyError(definitionFile: string, field: string, message: string): UserError {
  return new UserError('E_DATA', `${definitionFile}: ${field}: ${message}`);
}

/** Column names for a message: all of a short header, the first 12 of a long one. */
export function listColumns(columns: readonly string[]): string {
  const shown = columns.slice(0, 12).join(', ');
  return columns.length > 12 ? `${shown} and ${columns.length - 12} more` : shown;
}

/** Checks a list of column names of the settings (`data.features` or `data.exclude`) against the header. */
function checkListed(key: 'features' | 'exclude', names: readonly string[], settings: DataSettings, columns: readonly string[], csvFile: string, definitionFile: string): void {
  const seen = new Set<string>();
  names.forEach((name, index) => {
    const field = `data.${key}[${index}]`;
    if (!columns.includes(name)) throw studyError(definitionFile, field, `column '${name}' is not in ${csvFile}${didYouMean(name, columns)} (columns: ${listColumns(columns)})`);
    if (name === settings.target) {
      throw studyError(definitionFile, field, key === 'features' ? `'${name}' is the target column; a feature cannot also be the target` : `'${name}' is the target column; the target is never a feature, so it needs no exclusion`);
    }
    if (seen.has(name)) throw studyError(definitionFile, field, `'${name}' is listed twice`);
    seen.add(name);
  });
}

/**
 * The feature columns in use: the listed ones (checked against the header), else every column but the
 * target and the excluded ones. `features` and `exclude` together are refused: one list says it all.
 */
function featureNames(settings: DataSettings, columns: readonly string[], csvFile: string, definitionFile: string): string[] {
  if (settings.features !== undefined && settings.exclude !== undefined) {
    throw studyError(definitionFile, 'data.exclude', 'give either data.features (the columns to use) or data.exclude (the columns to leave out), not both');
  }
  if (settings.exclude !== undefined) {
    checkListed('exclude', settings.exclude, settings, columns, csvFile, definitionFile);
    const excluded = new Set(settings.exclude);
    return columns.filter((name) => name !== settings.target && !excluded.has(name));
  }
  if (settings.features === undefined) return columns.filter((name) => name !== settings.target);
  checkListed('features', settings.features, settings, columns, csvFile, definitionFile);
  return [...settings.features];
}

/** Checks the header against the settings before any row is read. */
function checkHeader(settings: DataSettings, columns: readonly string[], csvFile: string, definitionFile: string): void {
  const { target } = settings;
  if (!columns.includes(target)) {
    const hint = columns.length === 1 ? sniffHint(columns[0]!) : '';
    throw studyError(definitionFile, 'data.target', `column '${target}' is not in ${csvFile} (columns: ${listColumns(columns)})${hint}`);
  }
  if (featureNames(settings, columns, csvFile, definitionFile).length === 0) {
    const field = settings.exclude === undefined ? 'data.features' : 'data.exclude';
    throw studyError(definitionFile, field, `${csvFile} has no column besides the target '${target}'${settings.exclude === undefined ? '' : ' that data.exclude leaves in'}`);
  }
}

/** A one-column header that holds a space: the delimiter may be one rungwise does not try. */
function sniffHint(header: string): string {
  return / /.test(header) ? `; the header was read as one column: is the file delimited by spaces? Use ',', ';', tab or '|'` : '';
}

/** The target as read, with every row checked: a class label or a number in each row. */
function readTarget(settings: DataSettings, table: ColumnTable, notes: string[]): TargetValues {
  const { target, task } = settings;
  const column = table.column.get(target)!;
  const where = (row: number): string => `${table.file}: line ${table.lines[row]}: target '${target}'`;
  // Rows without a target are reported rather than dropped: silently losing rows would change the data set.
  const missing = (row: number): UserError => new UserError('E_DATA', `${where(row)} is missing; every row needs a target value (remove or fill the row)`);
  if (task !== 'regression') {
    const { values } = categoricalValues(column);
    const row = values.codes.indexOf(-1);
    if (row >= 0) throw missing(row);
    return { kind: 'labels', codes: values.codes, labels: values.labels };
  }
  const reading = typeColumn(column, table.lines, table.file);
  const values = reading.kind === 'numeric' ? reading.values.values : column.numbers;
  const row = values.findIndex((value) => Number.isNaN(value));
  if (row >= 0) {
    const text = spellingAt(column, row);
    if (isMissing(text)) throw missing(row);
    throw new UserError('E_DATA', `${where(row)} holds '${text}', expected a number for task 'regression'`);
  }
  if (reading.kind === 'numeric') notes.push(...reading.notes);
  return { kind: 'numbers', values };
}

/** The text of a cell kept as a spelling ('' when the cell is a number). */
function spellingAt(column: RawColumn, row: number): string {
  const position = column.spelledRows.indexOf(row);
  return position < 0 ? '' : column.spellings[column.spelledCodes[position]!]!;
}

/** Class labels in output order and rows per class; checks them against the task and the split. */
function checkClasses(
  settings: DataSettings,
  target: Extract<TargetValues, { kind: 'labels' }>,
  file: string,
  definitionFile: string,
): { classes: string[]; counts: Record<string, number> } {
  const { task } = settings;
  const classes = sortLabels(target.labels);
  const found = `found ${classes.length} (${classes.slice(0, 10).join(', ')}${classes.length > 10 ? ', ...' : ''})`;
  if (classes.length < 2) {
    throw studyError(definitionFile, 'data.target', `column '${settings.target}' of ${file} has a single class (${classes[0]}); a classifier needs at least 2`);
  }
  if (task === 'binary' && classes.length !== 2) {
    throw studyError(definitionFile, 'data.task', `'binary' needs exactly 2 classes in column '${settings.target}' of ${file}, ${found}; use 'multiclass'`);
  }
  if (task === 'multiclass' && classes.length < 3) {
    throw studyError(definitionFile, 'data.task', `'multiclass' needs at least 3 classes in column '${settings.target}' of ${file}, ${found}; use 'binary'`);
  }
  const perLabel = new Array<number>(target.labels.length).fill(0);
  for (const code of target.codes) perLabel[code]!++;
  const counts: Record<string, number> = Object.fromEntries(classes.map((label) => [label, 0]));
  target.labels.forEach((label, code) => (counts[label] = perLabel[code]!));
  return { classes, counts };
}

/** The CSV path for messages: relative to the working directory when inside it, else absolute. */
function displayPath(file: string): string {
  const relative = path.relative(process.cwd(), file);
  return relative !== '' && !relative.startsWith('..') && !path.isAbsolute(relative) ? relative : file;
}

/** Lets a signal or a progress line through between long steps; stops when aborted. */
async function checkpoint(signal: AbortSignal | undefined): Promise<void> {
  signal?.throwIfAborted();
  await nextTurn();
  signal?.throwIfAborted();
}

/** Types every feature column; columns that turn out categorical after some number cells are read again as text. */
async function readFeatures(
  names: readonly string[],
  table: ColumnTable,
  context: { definitionFile: string; notes: string[]; options: DataLoadOptions; emit: (event: DataEvent) => void },
): Promise<{ features: FeatureValues[]; missing: number }> {
  const { definitionFile, notes, options, emit } = context;
  const kinds = new Map<string, 'numeric' | 'categorical'>();
  const reread: string[] = [];
  for (const [done, name] of names.entries()) {
    emit({ type: 'preparing', file: table.file, step: 'typing', done, total: names.length });
    const reading = typeColumn(table.column.get(name)!, table.lines, table.file);
    if (reading.kind === 'empty') {
      throw studyError(definitionFile, 'data.features', `column '${name}' of ${table.file} has no value in any of its ${table.rows} rows; fill it or leave it out of data.features`);
    }
    notes.push(...reading.notes);
    kinds.set(name, reading.kind);
    if (reading.kind === 'categorical' && !reading.exact) reread.push(name);
    if (done % 16 === 15) await checkpoint(options.signal);
  }
  if (reread.length > 0) {
    const again = new ColumnSink(table.file, { only: new Set(reread), asText: new Set(reread) });
    await streamCsv(table.file, again, options);
    for (const [name, column] of again.table().column) table.column.set(name, column);
  }
  let missing = 0;
  const features = names.map((name): FeatureValues => {
    const column = table.column.get(name)!;
    if (kinds.get(name) === 'numeric') {
      for (const value of column.numbers) if (Number.isNaN(value)) missing++;
      return { kind: 'numeric', name, values: column.numbers };
    }
    const read = categoricalValues(column);
    missing += read.missing;
    return read.values;
  });
  return { features, missing };
}

/**
 * Reads the study's CSV (path relative to the definition file's folder) as a stream into typed
 * columns, checks it against the settings, splits it and encodes every split with a recipe built
 * from the training split alone. Rows whose target is missing are an error (naming the line), not
 * silently dropped. How odd cells were read comes back as `notes` (also sent as 'note' events), feature
 * columns that look like dates or identifiers or pass the distinct-value limit by being listed
 * (`feature-checks.ts`) as `warnings` ('warning' events), and
 * `csvSha256` is the SHA-256 of the CSV's bytes as they were read. With `choices` (a space that
 * searches preprocessing), `data.prepareChoice` encodes the same rows under another choice; a numeric
 * encoding takes `encoding` (the space's settings) and `foldSeed` (the study seed) for its frequencies.
 * @throws UserError (E_DATA) with one line naming the study field or the CSV line (or a text column
 * with more distinct values than `data.maxDistinctShare` allows); the signal's reason when aborted.
 */
export async function prepareData(
  settings: DataSettings,
  definitionFile: string,
  options: DataLoadOptions & { foldSeed?: number; choices?: boolean; encoding?: EncodingSettings } = {},
): Promise<{ data: PreparedData; summary: DataSummary; notes: string[]; warnings: string[]; csvSha256: string }> {
  const started = performance.now();
  const emit = (event: DataEvent): void => options.onDataEvent?.(event);
  const { csvFile, table, dialect, notes } = await readTable(settings, definitionFile, options, emit);

  const target = readTarget(settings, table, notes);
  const counts = checkTargetClasses(settings, target, table.rows, csvFile, definitionFile);
  const fractions = { validationFraction: settings.validationFraction, testFraction: settings.testFraction };
  const names = featureNames(settings, table.columns, csvFile, definitionFile);
  const { features, missing } = await readFeatures(names, table, { definitionFile, notes, options, emit });

  emit({ type: 'preparing', file: csvFile, step: 'splitting', done: 0, total: 1 });
  const indices = splitRows({
    rows: table.rows,
    ...(target.kind === 'labels' ? { strata: Array.from(target.codes, (code) => target.labels[code]!) } : {}),
    ...fractions,
    splitSeed: settings.splitSeed,
    file: csvFile,
  });
  const warnings = checkFeatureColumns({ settings, features, rows: table.rows, file: csvFile, definitionFile, ...(options.started ? { started: true } : {}) });
  const context: EncodingContext = { settings, definitionFile, csvFile, features, target, indices, lines: table.lines, recipes: new Map(), ...(options.foldSeed !== undefined ? { foldSeed: options.foldSeed } : {}), ...(options.encoding ? { encoding: options.encoding } : {}) };
  const data = await encodePrepared(context, DEFAULT_PREPROCESSING, { emit, ...(options.signal ? { signal: options.signal } : {}) });
  // Another choice of preprocessing is encoded from the same typed columns and splits, on demand.
  if (options.choices) {
    data.prepareChoice = (choice) => encodePrepared(context, choice, {});
    data.inputCountFor = (choice) => recipeOf(context, choice).inputCount;
  }

  const summary = dataSummary(csvFile, table, data, missing, counts);
  for (const message of notes) emit({ type: 'note', file: csvFile, message });
  for (const message of warnings) emit({ type: 'warning', file: csvFile, message });
  emit({ type: 'ready', file: csvFile, rows: table.rows, columns: table.columns.length, seconds: (performance.now() - started) / 1000 });
  return { data, summary, notes, warnings, csvSha256: dialect.sha256 ?? '' };
}


/** What a recipe and the encoded splits are made from: the typed columns and the rows of each split. */
interface EncodingContext {
  settings: DataSettings;
  definitionFile: string;
  csvFile: string;
  features: FeatureValues[];
  target: TargetValues;
  indices: { train: number[]; validation: number[]; test: number[] };
  lines: ArrayLike<number>;
  foldSeed?: number;
  /** The space's numeric-encoding settings (absent: the defaults). */
  encoding?: EncodingSettings;
  /** Each choice's recipe, fitted once (`recipeOf`): the input count asked before a choice is prepared and its encoding share it. */
  recipes: Map<string, PreprocessingRecipe>;
}

/** What a numeric encoding is fitted with: the settings and the study seed (the periodic frequencies' stream). */
function encodingOf(context: EncodingContext): NumericEncodingContext {
  return { settings: context.encoding ?? DEFAULT_ENCODING_SETTINGS, seed: context.foldSeed ?? 0 };
}

/** The recipe of a preprocessing choice, fitted on the training rows (once per choice). */
function recipeOf(context: EncodingContext, choice: PreprocessingChoice): PreprocessingRecipe {
  const key = preprocessingKey(choice);
  let recipe = context.recipes.get(key);
  if (!recipe) {
    const { settings, features, target, indices } = context;
    recipe = buildColumnRecipe({ task: settings.task, target: settings.target, features, targetValues: target, trainingRows: indices.train, preprocessing: choice, encoding: encodingOf(context) });
    context.recipes.set(key, recipe);
  }
  return recipe;
}

/**
 * The recipe of a preprocessing choice fitted on the training rows, every split encoded with it (the
 * training and validation splits in shared memory), the class weights, costs and, with `data.folds`,
 * the folds under the same choice.
 */
async function encodePrepared(context: EncodingContext, choice: PreprocessingChoice, progress: { emit?: (event: DataEvent) => void; signal?: AbortSignal }): Promise<PreparedData> {
  const { settings, definitionFile, csvFile, features, target, indices } = context;
  const recipe = recipeOf(context, choice);
  const splitArrays = async (rows: readonly number[], done: number, shared: boolean): Promise<SplitArrays> => {
    progress.emit?.({ type: 'preparing', file: csvFile, step: 'encoding', done, total: 3 });
    await checkpoint(progress.signal);
    return { rows: rows.length, x: encodeColumns(recipe, features, rows, shared), y: encodeTargetValues(recipe, target, rows, shared), lines: Int32Array.from(rows, (row) => context.lines[row]!) };
  };
  const data: PreparedData = {
    recipe,
    train: await splitArrays(indices.train, 0, true),
    validation: await splitArrays(indices.validation, 1, true),
    test: await splitArrays(indices.test, 2, false),
    rowIndices: indices,
  };
  const weights = recipe.classes && settings.classWeights ? trainingClassWeights(settings.classWeights, recipe.classes, data.train.y) : undefined;
  if (weights) data.classWeights = weights;
  if (recipe.classes && settings.costs) data.costMatrix = costMatrixFor(settings.costs, recipe.classes, settings.target, definitionFile);
  if (settings.folds !== undefined) {
    if (context.foldSeed === undefined) throw new Error('prepareData: data.folds needs options.foldSeed (the study seed)');
    const rows = [...indices.train, ...indices.validation];
    data.folds = prepareFolds({ settings, features, target, rows, k: settings.folds, seed: context.foldSeed, file: csvFile, definitionFile, choice, encoding: encodingOf(context) });
    data.foldSeed = context.foldSeed;
  }
  return data;
}

/** Reads the CSV into typed columns, with a note when its delimiter is not a comma. */
async function readTable(
  settings: DataSettings,
  definitionFile: string,
  options: DataLoadOptions,
  emit: (event: DataEvent) => void,
): Promise<{ csvFile: string; table: ColumnTable; dialect: Awaited<ReturnType<typeof streamCsv>>; notes: string[] }> {
  const csvFile = displayPath(path.resolve(path.dirname(definitionFile), settings.csv));
  const info = await stat(csvFile).catch(() => undefined);
  if (info === undefined) throw studyError(definitionFile, 'data.csv', `${csvFile} not found (the path is relative to the study file's folder)`);
  if (info.isDirectory()) throw studyError(definitionFile, 'data.csv', `${csvFile} is a directory; expected a CSV file (the path is relative to the study file's folder)`);
  const sink = new ColumnSink(csvFile, {
    asText: new Set(settings.task === 'regression' ? [] : [settings.target]),
    totalBytes: info.size,
    onHeader: (columns) => checkHeader(settings, columns, csvFile, definitionFile),
  });
  const dialect = await streamCsv(csvFile, sink, { ...(options.signal ? { signal: options.signal } : {}), onEvent: emit });
  const notes: string[] = [];
  if (dialect.delimiter !== ',') notes.push(`${csvFile}: read with ${delimiterName(dialect.delimiter)} as the delimiter (the header line holds more of it than of ',')`);
  await checkpoint(options.signal);
  return { csvFile, table: sink.table(), dialect, notes };
}

/**
 * Classification: the target's classes, checked against the class weights and costs the study names
 * and against the stratified split (every class needs a row in each split); the rows of each class.
 */
function checkTargetClasses(settings: DataSettings, target: TargetValues, rows: number, csvFile: string, definitionFile: string): Record<string, number> | undefined {
  const classes = target.kind === 'labels' ? checkClasses(settings, target, csvFile, definitionFile) : undefined;
  if (!classes) return undefined;
  if (settings.classWeights) checkClassWeightLabels(settings.classWeights, classes.classes, settings.target, definitionFile);
  if (settings.costs) costMatrixFor(settings.costs, classes.classes, settings.target, definitionFile);
  const counts = classes.counts;
  const splits = splitSizes({ rows, validationFraction: settings.validationFraction, testFraction: settings.testFraction, file: csvFile }).filter((size) => size > 0).length;
  const small = classes.classes.find((label) => counts[label]! < splits);
  if (small !== undefined) {
    throw studyError(
      definitionFile,
      'data',
      `class '${small}' of column '${settings.target}' has ${counts[small]} row${counts[small] === 1 ? '' : 's'} in ${csvFile}; ` +
        `the stratified split into ${splits === 3 ? 'training, validation and test' : 'training and validation'} needs at least ${splits} rows of each class`,
    );
  }
  return counts;
}

/** What the study file records of the data: its size, the splits' rows, inputs, missing values and class counts. */
function dataSummary(csvFile: string, table: ColumnTable, data: PreparedData, missing: DataSummary['missingValues'], counts: Record<string, number> | undefined): DataSummary {
  const summary: DataSummary = {
    file: csvFile,
    rows: table.rows,
    columns: table.columns.length,
    trainRows: data.train.rows,
    validationRows: data.validation.rows,
    testRows: data.test.rows,
    inputCount: data.recipe.inputCount,
    missingValues: missing,
  };
  if (counts !== undefined) summary.classCounts = counts;
  return summary;
}

/**
 * The k folds of the training and validation rows, each with its own recipe fitted on its training
 * part (the other folds) and its class weights from those rows.
 */
function prepareFolds(context: {
  settings: DataSettings;
  features: FeatureValues[];
  target: TargetValues;
  rows: number[];
  k: number;
  seed: number;
  file: string;
  definitionFile: string;
  choice: PreprocessingChoice;
  encoding: NumericEncodingContext;
}): PreparedFold[] {
  const { settings, features, target, k, seed, file, definitionFile, choice, encoding } = context;
  const strata = target.kind === 'labels' ? Array.from(target.codes, (code) => target.labels[code]!) : undefined;
  const rows = [...context.rows].sort((a, b) => a - b);
  const folds = assignFolds({ rows, ...(strata ? { strata } : {}), k, seed, file, definitionFile });
  return folds.map((validationRows, i): PreparedFold => {
    const trainingRows = otherFolds(folds, i);
    const recipe = buildColumnRecipe({ task: settings.task, target: settings.target, features, targetValues: target, trainingRows, preprocessing: choice, encoding });
    const part = (members: readonly number[]): SplitArrays => ({ rows: members.length, x: encodeColumns(recipe, features, members, true), y: encodeTargetValues(recipe, target, members, true) });
    const fold: PreparedFold = { recipe, train: part(trainingRows), validation: part(validationRows), rows: validationRows };
    const weights = recipe.classes && settings.classWeights ? trainingClassWeights(settings.classWeights, recipe.classes, fold.train.y) : undefined;
    if (weights) fold.classWeights = weights;
    if (recipe.classes && settings.costs) fold.costMatrix = costMatrixFor(settings.costs, recipe.classes, settings.target, definitionFile);
    return fold;
  });
}

/** The values in shared memory: as they are when they already live there (prepareData puts them there), else a copy. */
function shared(values: Float32Array): Float32Array {
  if (values.buffer instanceof SharedArrayBuffer && values.byteOffset === 0 && values.byteLength === values.buffer.byteLength) return values;
  const copy = new Float32Array(new SharedArrayBuffer(values.byteLength));
  copy.set(values);
  return copy;
}

/**
 * The training and validation splits in SharedArrayBuffers for the workers (copied only when they
 * are not there already).
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
  if (data.classWeights) dataset.classWeights = [...data.classWeights];
  if (data.costMatrix) dataset.costMatrix = data.costMatrix.map((row) => [...row]);
  return dataset;
}
