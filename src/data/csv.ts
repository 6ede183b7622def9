import { dataError, streamCsv, streamCsvBytes, type RecordSink, type StreamOptions } from './source.js';

/** A parsed CSV file: every value kept as text, every row with its CSV line number. */
export interface CsvTable {
  /** Path as given to {@link readCsv}, used in messages. */
  file: string;
  /** Header names in file order (unique, non-empty). */
  columns: string[];
  /** One record per data row, keyed by header name. */
  rows: Record<string, string>[];
  /** 1-based line on which each row starts (the header is line 1 when the file has no leading blank lines). */
  lines: number[];
}

/** Values that count as missing, compared after trimming and lower-casing. */
const MISSING = new Set(['', 'na', 'n/a', 'nan', 'null', '?']);

/** True when a cell is one of the missing-value spellings: '', NA, N/A, NaN, null, ? (any case, surrounding spaces ignored). */
export function isMissing(value: string): boolean {
  return MISSING.has(value.trim().toLowerCase());
}

// Plain decimal notation only: hex, 'Infinity' and friends are text, not numbers.
const DECIMAL = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** The finite number a cell spells, or undefined when it is not a plain decimal number. */
export function parseNumber(value: string): number | undefined {
  // Number() alone would also take '', hex, binary, octal and 'Infinity'; the pattern leaves only decimals.
  const number = Number(value);
  if (!Number.isFinite(number)) return undefined;
  const text = value.trim();
  return DECIMAL.test(text) ? number : undefined;
}

/** Checks a header row: every name non-empty and unique. */
export function checkHeader(file: string, names: readonly string[], line: number): void {
  const seen = new Map<string, number>();
  names.forEach((name, index) => {
    if (name.trim() === '') throw dataError(file, `line ${line}: column ${index + 1} of the header has no name`);
    const earlier = seen.get(name);
    if (earlier !== undefined) {
      throw dataError(file, `line ${line}: header name '${name}' appears twice (columns ${earlier + 1} and ${index + 1}); names must be unique`);
    }
    seen.set(name, index);
  });
}

/** Checks that a data row has as many fields as the header. */
export function checkFieldCount(file: string, fields: readonly string[], columns: number, line: number): void {
  if (fields.length !== columns) throw dataError(file, `line ${line}: has ${fields.length} fields, the header has ${columns}`);
}

/** The error for a file with a header and nothing else. */
export function noDataRows(file: string, headerLine: number): Error {
  return dataError(file, `line ${headerLine}: the file has a header but no data rows`);
}

/** Collects every row as a record of text values (for small files: predictions, tests). */
class TableSink implements RecordSink {
  columns: string[] = [];
  headerLine = 1;
  readonly rows: Record<string, string>[] = [];
  readonly lines: number[] = [];

  constructor(private readonly file: string) {}

  header(fields: string[], line: number): void {
    checkHeader(this.file, fields, line);
    this.columns = fields;
    this.headerLine = line;
  }

  row(fields: string[], line: number): void {
    checkFieldCount(this.file, fields, this.columns.length, line);
    // fromEntries defines own properties, so a column named '__proto__' stays an ordinary key.
    this.rows.push(Object.fromEntries(this.columns.map((name, c) => [name, fields[c]!])));
    this.lines.push(line);
  }

  table(): CsvTable {
    if (this.rows.length === 0) throw noDataRows(this.file, this.headerLine);
    return { file: this.file, columns: this.columns, rows: this.rows, lines: this.lines };
  }
}

/** Reads and parses a CSV file; every problem is a UserError (code E_DATA) naming the file and the line. */
export async function readCsv(file: string, options: StreamOptions = {}): Promise<CsvTable> {
  const sink = new TableSink(file);
  await streamCsv(file, sink, options);
  return sink.table();
}

/** Parses CSV bytes (UTF-8, optional BOM) with the same reader as files. `file` only names the source in messages. */
export async function parseCsv(bytes: Uint8Array, file: string): Promise<CsvTable> {
  const sink = new TableSink(file);
  await streamCsvBytes(bytes, file, sink);
  return sink.table();
}
