import { readFile } from 'node:fs/promises';
import { CsvError, parse } from 'csv-parse/sync';
import { UserError } from '../errors.js';

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
  const text = value.trim();
  if (!DECIMAL.test(text)) return undefined;
  const number = Number(text);
  return Number.isFinite(number) ? number : undefined;
}

function dataError(file: string, message: string): UserError {
  return new UserError('E_DATA', `${file}: ${message}`);
}

/** Reads and parses a CSV file; every problem is a UserError (code E_DATA) naming the file and the line. */
export async function readCsv(file: string): Promise<CsvTable> {
  let bytes: Buffer;
  try {
    bytes = await readFile(file);
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    const reason = code === 'ENOENT' ? 'file not found' : code === 'EISDIR' ? 'is a directory, not a CSV file' : `cannot be read (${code ?? 'unknown error'})`;
    throw dataError(file, reason);
  }
  return parseCsv(bytes, file);
}

function countNewlines(bytes: Uint8Array, from: number, to: number): number {
  let count = 0;
  for (let i = from; i < to; i++) if (bytes[i] === 0x0a) count++;
  return count;
}

/** Parses CSV bytes (UTF-8, optional BOM). `file` only names the source in messages. */
export function parseCsv(bytes: Uint8Array, file: string): CsvTable {
  if (bytes.length === 0) throw dataError(file, 'the file is empty; expected a header row and data rows');
  const nul = bytes.indexOf(0);
  if (nul >= 0) {
    const line = countNewlines(bytes, 0, nul) + 1;
    throw dataError(file, `line ${line}: contains a NUL byte; this looks like a binary file, expected UTF-8 CSV text`);
  }
  try {
    new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    throw dataError(file, `line ${firstInvalidUtf8Line(bytes)}: is not valid UTF-8 text; save the CSV as UTF-8`);
  }

  let records: { record: string[]; info: { bytes: number } }[];
  try {
    records = parse(Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength), {
      info: true,
      bom: true,
      // Trims spaces around delimiters only; text inside quotes is kept as written.
      trim: true,
      skip_empty_lines: true,
      // Ragged rows are reported below with both field counts.
      relax_column_count: true,
    }) as unknown as { record: string[]; info: { bytes: number } }[];
  } catch (error) {
    if (error instanceof CsvError) {
      const line = (error as CsvError & { lines?: number }).lines;
      const reason = error.message.replace(/ at line \d+/, '').replace(/\s+/g, ' ');
      throw dataError(file, `${line === undefined ? '' : `line ${line}: `}${reason}`);
    }
    throw error;
  }

  // Each record starts where the previous one ended, after any blank lines csv-parse skipped.
  // Counting '\n' bytes ourselves gives the true line even when quoted fields hold line breaks.
  const starts: number[] = [];
  let offset = 0;
  let newlines = 0; // '\n' bytes in bytes[0, offset)
  for (const { info } of records) {
    let position = offset;
    while (position < bytes.length && (bytes[position] === 0x0a || bytes[position] === 0x0d)) {
      if (bytes[position] === 0x0a) newlines++;
      position++;
    }
    starts.push(newlines + 1);
    newlines += countNewlines(bytes, position, info.bytes);
    offset = info.bytes;
  }

  const header = records[0];
  if (header === undefined) throw dataError(file, 'the file has no rows; expected a header row and data rows');
  const columns = header.record;
  const headerLine = starts[0]!;
  const seen = new Map<string, number>();
  columns.forEach((name, index) => {
    if (name.trim() === '') throw dataError(file, `line ${headerLine}: column ${index + 1} of the header has no name`);
    const earlier = seen.get(name);
    if (earlier !== undefined) {
      throw dataError(file, `line ${headerLine}: header name '${name}' appears twice (columns ${earlier + 1} and ${index + 1}); names must be unique`);
    }
    seen.set(name, index);
  });
  if (records.length === 1) throw dataError(file, `line ${headerLine}: the file has a header but no data rows`);

  const rows: Record<string, string>[] = [];
  const lines: number[] = [];
  for (let r = 1; r < records.length; r++) {
    const fields = records[r]!.record;
    const line = starts[r]!;
    if (fields.length !== columns.length) {
      throw dataError(file, `line ${line}: has ${fields.length} fields, the header has ${columns.length}`);
    }
    // fromEntries defines own properties, so a column named '__proto__' stays an ordinary key.
    rows.push(Object.fromEntries(columns.map((name, c) => [name, fields[c]!])));
    lines.push(line);
  }
  return { file, columns, rows, lines };
}

function firstInvalidUtf8Line(bytes: Uint8Array): number {
  const decoder = new TextDecoder('utf-8', { fatal: true });
  let start = 0;
  let line = 1;
  for (let i = 0; i <= bytes.length; i++) {
    if (i === bytes.length || bytes[i] === 0x0a) {
      try {
        decoder.decode(bytes.subarray(start, i));
      } catch {
        return line;
      }
      line++;
      start = i + 1;
    }
  }
  return line;
}
