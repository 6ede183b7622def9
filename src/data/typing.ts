import { isMissing } from './csv.js';
import type { RawColumn } from './columns.js';
import type { CategoricalValues, NumericValues } from './values.js';

/** How a cell that is not a plain finite number is read. */
type SpellingKind = 'missing' | 'not-finite' | 'decimal-comma' | 'text';

const NOT_FINITE = /^[+-]?(inf|infinity)$/i;
const OVERFLOW = /^[+-]?(\d+\.?\d*|\.\d+)[eE][+-]?\d+$/;
const DECIMAL_COMMA = /^[+-]?\d*,\d+$/;

/** The number a decimal-comma spelling stands for ('3,5' → 3.5), else undefined. */
export function decimalCommaNumber(text: string): number | undefined {
  const trimmed = text.trim();
  return DECIMAL_COMMA.test(trimmed) ? Number(trimmed.replace(',', '.')) : undefined;
}

/** 'Infinity', '-inf', or a decimal too large for a float64 ('1e999'). */
export function isNotFinite(text: string): boolean {
  return spellingKind(text) === 'not-finite';
}

function spellingKind(text: string): SpellingKind {
  if (isMissing(text)) return 'missing';
  const trimmed = text.trim();
  // A plain decimal that did not parse as a finite number overflowed (1e999).
  if (NOT_FINITE.test(trimmed) || OVERFLOW.test(trimmed)) return 'not-finite';
  if (DECIMAL_COMMA.test(trimmed)) return 'decimal-comma';
  return 'text';
}

/**
 * The share of a column's values that may be text while it stays numeric: at most 1 in 20 (5%).
 * Those cells are read as missing and named in a note.
 */
export const TEXT_SHARE_IN_NUMERIC = 1 / 20;
const LINES_NAMED = 3;

/** What typing decided for one column, with the notes that state the reading. */
export type ColumnReading =
  | { kind: 'numeric'; values: NumericValues; notes: string[]; missing: number }
  /** Categorical: `exact` is false when some cells were kept as numbers, so the column must be read again as text. */
  | { kind: 'categorical'; exact: boolean; notes: string[] }
  | { kind: 'empty'; notes: string[] };

interface Spelled {
  text: string;
  kind: SpellingKind;
  lines: number[];
  count: number;
}

function spelledCells(column: RawColumn, lines: Int32Array): Spelled[] {
  const spelled: Spelled[] = column.spellings.map((text) => ({ text, kind: spellingKind(text), lines: [], count: 0 }));
  for (let i = 0; i < column.spelledRows.length; i++) {
    const entry = spelled[column.spelledCodes[i]!]!;
    entry.count++;
    if (entry.lines.length < LINES_NAMED) entry.lines.push(lines[column.spelledRows[i]!]!);
  }
  return spelled.filter((entry) => entry.count > 0);
}

function cellList(entries: readonly Spelled[]): string {
  return entries
    .map((entry) => {
      const more = entry.count > entry.lines.length ? ` and ${entry.count - entry.lines.length} more` : '';
      return `'${entry.text}' on line${entry.count > 1 ? 's' : ''} ${entry.lines.join(', ')}${more}`;
    })
    .join('; ');
}

const sum = (entries: readonly Spelled[]): number => entries.reduce((total, entry) => total + entry.count, 0);
const plural = (count: number, word: string): string => `${count} ${word}${count === 1 ? '' : 's'}`;

/**
 * Types one column (see README, "How the CSV is read"):
 * - no value in any row: empty;
 * - every value a plain number, a non-finite number ('Infinity', '1e999') or a decimal-comma number: numeric;
 *   decimal commas are read as decimal marks when no value of the column uses a point, else as missing;
 *   non-finite values are read as missing;
 * - at most 1 in 20 values text, the rest numbers: numeric, the text cells read as missing;
 * - otherwise categorical, every value a category as written.
 * Missing spellings other than an empty cell (NA, NaN, ?, ...) are named in a note.
 */
export function typeColumn(column: RawColumn, lines: Int32Array, file: string): ColumnReading {
  const spelled = spelledCells(column, lines);
  const of = (kind: SpellingKind): Spelled[] => spelled.filter((entry) => entry.kind === kind);
  const missing = of('missing');
  const notFinite = of('not-finite');
  const commas = of('decimal-comma');
  const text = of('text');
  const present = column.numberCount + sum(notFinite) + sum(commas) + sum(text);
  const where = `${file}: column '${column.name}'`;
  const notes: string[] = [];
  const named = missing.filter((entry) => entry.text.trim() !== '');
  if (named.length > 0) notes.push(`${where}: ${plural(sum(named), 'cell')} read as missing: ${cellList(named)}`);
  if (present === 0) return { kind: 'empty', notes };

  const numeric = column.numberCount > 0 || sum(commas) > 0;
  if (column.asText || !numeric || sum(text) > present * TEXT_SHARE_IN_NUMERIC) {
    if (!column.asText && column.numberCount > 0) {
      notes.push(`${where}: read as categorical: ${plural(sum(text), 'value')} of ${present} ${sum(text) === 1 ? 'is' : 'are'} not numbers (${cellList(text.slice(0, 2))})`);
    }
    return { kind: 'categorical', exact: column.asText || column.numberCount === 0, notes };
  }

  const values = column.numbers;
  const readCommas = !column.decimalPoint && sum(commas) > 0;
  if (readCommas) {
    for (let i = 0; i < column.spelledRows.length; i++) {
      const spelling = column.spellings[column.spelledCodes[i]!]!;
      const number = decimalCommaNumber(spelling);
      if (number !== undefined) values[column.spelledRows[i]!] = number;
    }
    const example = commas[0]!;
    notes.push(`${where}: ${plural(sum(commas), 'value')} written with a decimal comma read as numbers ('${example.text}' on line ${example.lines[0]} as ${decimalCommaNumber(example.text)})`);
  }
  const unread = [...notFinite, ...(readCommas ? [] : commas), ...text];
  if (unread.length > 0) {
    const why = [notFinite.length > 0 ? 'not finite' : '', commas.length > 0 && !readCommas ? 'a decimal comma among decimal points' : '', text.length > 0 ? 'text' : '']
      .filter(Boolean)
      .join(', ');
    notes.push(`${where} is numeric; ${plural(sum(unread), 'cell')} (${why}) read as missing: ${cellList(unread)}`);
  }
  let missingCount = 0;
  for (const value of values) if (Number.isNaN(value)) missingCount++;
  if (missingCount === values.length) return { kind: 'empty', notes };
  return { kind: 'numeric', values: { kind: 'numeric', name: column.name, values }, notes, missing: missingCount };
}

/** A column read as text, as category labels: each row's label index, -1 where missing. */
export function categoricalValues(column: RawColumn): { values: CategoricalValues; missing: number } {
  const labels: string[] = [];
  const labelOf = column.spellings.map((text) => (isMissing(text) ? -1 : labels.push(text) - 1));
  const codes = new Int32Array(column.spelledCodes.length);
  let missing = 0;
  for (let row = 0; row < codes.length; row++) {
    codes[row] = labelOf[column.spelledCodes[row]!]!;
    if (codes[row]! < 0) missing++;
  }
  return { values: { kind: 'categorical', name: column.name, codes, labels }, missing };
}
