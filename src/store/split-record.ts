/**
 * `splits.json`: which data rows went to training, validation and test (and, with `data.folds`, to
 * each fold), so anyone can re-select them from the CSV and re-score the winner with another tool.
 * Written once by the coordinator when the study starts (durably, whole or not at all); `resume`
 * checks the split it recomputes against it and refuses a difference.
 *
 * Rows are 1-based data-row numbers: row 1 is the first record after the header (not a line number:
 * a quoted cell may span lines).
 */
import { readFile } from 'node:fs/promises';
import type { PreparedData } from '../data/types.js';
import { UserError } from '../core/errors.js';
import { writeFileDurably } from '../files/durable-write.js';
import type { DataSettings } from '../study/definition.js';
import { runPaths } from './run-dir.js';

export const SPLIT_RECORD_FORMAT = 'rungwise-splits';
export const SPLIT_RECORD_VERSION = 1;
export const ROW_NUMBERING = '1-based data-row numbers: row 1 is the first record after the header line';

export interface SplitRecord {
  format: typeof SPLIT_RECORD_FORMAT;
  version: typeof SPLIT_RECORD_VERSION;
  /** How to read the row numbers below. */
  rows: typeof ROW_NUMBERING;
  csv: { file: string; sha256: string; dataRows: number };
  /** How the split was drawn; classification splits are stratified by the target. */
  split: { splitSeed: number; validationFraction: number; testFraction: number; stratifiedBy: string | null };
  training: number[];
  validation: number[];
  test: number[];
  /**
   * With `data.folds`: the training and validation rows together, cut into k folds (test rows are not
   * in any fold). Fold i's validation rows are `rows[i]`; its training rows are every other fold's.
   */
  folds?: { k: number; seed: number; stratifiedBy: string | null; rows: number[][] };
}

const oneBased = (rows: readonly number[]): number[] => rows.map((row) => row + 1);

/** The record of `data`'s split (`data.rowIndices` must be set: `prepareData` sets it). */
export function splitRecordOf(data: PreparedData, settings: DataSettings, csv: { file: string; sha256: string }): SplitRecord {
  const indices = data.rowIndices;
  if (!indices) throw new Error('split record: the prepared data carry no row indices');
  const stratifiedBy = settings.task === 'regression' ? null : settings.target;
  const record: SplitRecord = {
    format: SPLIT_RECORD_FORMAT,
    version: SPLIT_RECORD_VERSION,
    rows: ROW_NUMBERING,
    csv: { file: csv.file, sha256: csv.sha256.startsWith('sha256:') ? csv.sha256 : `sha256:${csv.sha256}`, dataRows: indices.train.length + indices.validation.length + indices.test.length },
    split: { splitSeed: settings.splitSeed, validationFraction: settings.validationFraction, testFraction: settings.testFraction, stratifiedBy },
    training: oneBased(indices.train),
    validation: oneBased(indices.validation),
    test: oneBased(indices.test),
  };
  if (data.folds) {
    record.folds = { k: data.folds.length, seed: data.foldSeed ?? 0, stratifiedBy, rows: data.folds.map((fold) => oneBased(fold.rows)) };
  }
  return record;
}

/** Plain JSON, two-space indented, with each array of row numbers on one line. */
export function formatSplitRecord(record: SplitRecord): string {
  const text = JSON.stringify(record, null, 2).replace(/\[(\s*-?\d+(?:,\s*-?\d+)*\s*)\]/g, (_match, inner: string) => `[${inner.replace(/\s+/g, '')}]`);
  return `${text}\n`;
}

export async function writeSplitRecord(dir: string, record: SplitRecord): Promise<void> {
  await writeFileDurably(runPaths.splitRecord(dir), formatSplitRecord(record));
}

/** The run directory's split record, or undefined when it has none (a study from before the record). */
export async function readSplitRecord(dir: string): Promise<SplitRecord | undefined> {
  const file = runPaths.splitRecord(dir);
  const text = await readFile(file, 'utf8').catch((error: NodeJS.ErrnoException) => {
    if (error.code === 'ENOENT') return undefined;
    throw error;
  });
  if (text === undefined) return undefined;
  let record: unknown;
  try {
    record = JSON.parse(text);
  } catch {
    throw new UserError('E_SPLIT_RECORD', `${file}: not valid JSON; restore it from the study's copy or delete it to have resume write it again`);
  }
  const r = record as Partial<SplitRecord>;
  if (r.format !== SPLIT_RECORD_FORMAT || r.version !== SPLIT_RECORD_VERSION) {
    throw new UserError('E_SPLIT_RECORD', `${file}: format '${String(r.format)}' version ${String(r.version)} is not a split record rungwise reads (expected '${SPLIT_RECORD_FORMAT}' version ${SPLIT_RECORD_VERSION})`);
  }
  return record as SplitRecord;
}

/** What differs between two records' splits (the CSV's hash is checked elsewhere), or undefined. */
export function splitDifference(recorded: SplitRecord, now: SplitRecord): string | undefined {
  for (const key of ['splitSeed', 'validationFraction', 'testFraction', 'stratifiedBy'] as const) {
    if (recorded.split?.[key] !== now.split[key]) return `split.${key} is ${JSON.stringify(recorded.split?.[key])} there, ${JSON.stringify(now.split[key])} now`;
  }
  for (const key of ['training', 'validation', 'test'] as const) {
    const difference = rowsDifference(recorded[key], now[key]);
    if (difference) return `the ${key} rows differ (${difference})`;
  }
  if ((recorded.folds === undefined) !== (now.folds === undefined)) {
    return recorded.folds ? `it records ${recorded.folds.k} folds, the study now has none` : `it records no folds, the study now has ${now.folds!.k}`;
  }
  if (recorded.folds && now.folds) {
    if (recorded.folds.k !== now.folds.k) return `folds.k is ${recorded.folds.k} there, ${now.folds.k} now`;
    if (recorded.folds.seed !== now.folds.seed) return `folds.seed is ${recorded.folds.seed} there, ${now.folds.seed} now`;
    for (let i = 0; i < now.folds.k; i++) {
      const difference = rowsDifference(recorded.folds.rows?.[i], now.folds.rows[i]!);
      if (difference) return `the rows of fold ${i + 1} differ (${difference})`;
    }
  }
  return undefined;
}

function rowsDifference(recorded: readonly number[] | undefined, now: readonly number[]): string | undefined {
  if (!Array.isArray(recorded)) return 'missing there';
  if (recorded.length !== now.length) return `${recorded.length} rows there, ${now.length} now`;
  const at = now.findIndex((row, i) => recorded[i] !== row);
  return at < 0 ? undefined : `row ${recorded[at]} there, ${now[at]} now, at position ${at + 1}`;
}

/**
 * On resume: check the recomputed split against `splits.json`, or write it when the study predates it.
 * @throws UserError (E_SPLIT_CHANGED, exit 2) naming the file and what differs.
 */
export async function checkOrWriteSplitRecord(dir: string, now: SplitRecord): Promise<'checked' | 'written'> {
  const recorded = await readSplitRecord(dir);
  if (!recorded) {
    await writeSplitRecord(dir, now);
    return 'written';
  }
  const difference = splitDifference(recorded, now);
  if (difference) {
    throw new UserError(
      'E_SPLIT_CHANGED',
      `${runPaths.splitRecord(dir)}: the split recomputed from the study's data and settings does not match the recorded one: ${difference}; restore the file or the data, or start a new study`,
    );
  }
  return 'checked';
}
