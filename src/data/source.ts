import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { open } from 'node:fs/promises';
import { Readable, Writable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { CsvError, parse } from 'csv-parse';
import { UserError } from '../core/errors.js';
import { utf16Kind } from '../text/encoding.js';
import type { DataObserver } from './events.js';
import { LineCounter } from './lines.js';

/** Receives the records of a CSV file in order, each with the line on which it starts. May throw a UserError. */
export interface RecordSink {
  header(fields: string[], line: number): void;
  row(fields: string[], line: number): void;
}

export interface StreamOptions {
  /** Stops the reading; the promise rejects with the signal's reason. */
  signal?: AbortSignal;
  onEvent?: DataObserver;
}

/** What the reader found out about the file besides its records. */
export interface CsvDialect {
  delimiter: string;
  /** Bytes in the file. */
  bytes: number;
  /** SHA-256 of the bytes read (hex), computed while streaming. */
  sha256?: string;
}

/** Delimiters tried on the header line, in order of preference when counts tie. */
const DELIMITERS = [',', ';', '\t', '|'] as const;
const CHUNK_BYTES = 1 << 20;
const SNIFF_BYTES = 1 << 16;

export function dataError(file: string, message: string): UserError {
  return new UserError('E_DATA', `${file}: ${message}`);
}

export function delimiterName(delimiter: string): string {
  return delimiter === '\t' ? 'tab' : `'${delimiter}'`;
}

async function readStart(file: string): Promise<{ start: Buffer; bytes: number }> {
  let handle;
  try {
    handle = await open(file, 'r');
    const { size } = await handle.stat();
    if ((await handle.stat()).isDirectory()) throw Object.assign(new Error('directory'), { code: 'EISDIR' });
    const start = Buffer.alloc(Math.min(SNIFF_BYTES, size));
    await handle.read(start, 0, start.length, 0);
    return { start, bytes: size };
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    const reason = code === 'ENOENT' ? 'file not found' : code === 'EISDIR' ? 'is a directory, not a CSV file' : `cannot be read (${code ?? 'unknown error'})`;
    throw dataError(file, reason);
  } finally {
    await handle?.close();
  }
}

/** The delimiter of the header line: the candidate found most often outside quotes (',' when none is). */
export function sniffDelimiter(start: Buffer): string {
  const counts = new Map<number, number>(DELIMITERS.map((d) => [d.charCodeAt(0), 0]));
  let quoted = false;
  for (const byte of start) {
    if (byte === 0x22) quoted = !quoted;
    else if (!quoted && (byte === 0x0a || byte === 0x0d)) break;
    else if (!quoted && counts.has(byte)) counts.set(byte, counts.get(byte)! + 1);
  }
  let best: string = ',';
  for (const d of DELIMITERS) if (counts.get(d.charCodeAt(0))! > counts.get(best.charCodeAt(0))!) best = d;
  return best;
}

/** Rewrites csv-parse's errors in the project's words, at the line where the broken record starts. */
function csvProblem(error: CsvError, line: number): string {
  const field = /field (\d+)/.exec(error.message)?.[1];
  const where = field === undefined ? '' : ` (field ${Number(field) + 1})`;
  switch (error.code) {
    case 'CSV_QUOTE_NOT_CLOSED':
      return `line ${line}: a quoted field opens on this line and is never closed; end it with '"' (a quote inside a quoted field is written twice: "")`;
    case 'INVALID_OPENING_QUOTE':
      return `line ${line}: a quote appears inside an unquoted field${where}; put the whole field in quotes and write the inner quote twice ("")`;
    case 'CSV_INVALID_CLOSING_QUOTE':
    case 'CSV_NON_TRIMABLE_CHAR_AFTER_CLOSING_QUOTE':
      return `line ${line}: text follows the closing quote of a field${where}; a quoted field ends at its closing quote (write a quote inside it twice: "")`;
    default:
      return `line ${line}: cannot be read as CSV (${error.message.replace(/ at line \d+.*$/, '').replace(/\s+/g, ' ')})`;
  }
}

/**
 * Streams a CSV file (UTF-8, optional BOM) record by record into `sink`, never holding the whole
 * file: checks the encoding as it goes, counts lines itself (quoted fields may hold line breaks),
 * reports reading progress and honours `signal`. The delimiter is the one the header line uses most
 * among `,` `;` tab `|` (`,` when it holds none).
 * @throws UserError (E_DATA) naming the file and the line of the problem.
 */
export async function streamCsv(file: string, sink: RecordSink, options: StreamOptions = {}): Promise<CsvDialect> {
  options.signal?.throwIfAborted();
  const { start, bytes } = await readStart(file);
  if (bytes === 0) throw dataError(file, 'the file is empty; expected a header row and data rows');
  const utf16 = utf16Kind(start);
  if (utf16 !== undefined) throw dataError(file, `is ${utf16} text; save the CSV as UTF-8`);
  const delimiter = sniffDelimiter(start);

  return streamFrom(createReadStream(file, { highWaterMark: CHUNK_BYTES }), file, sink, { delimiter, bytes }, options);
}

/** Streams CSV bytes already in memory (tests, small inputs) through the same reader as files. */
export async function streamCsvBytes(bytes: Uint8Array, file: string, sink: RecordSink): Promise<CsvDialect> {
  if (bytes.length === 0) throw dataError(file, 'the file is empty; expected a header row and data rows');
  const start = Buffer.from(bytes.buffer, bytes.byteOffset, Math.min(bytes.byteLength, SNIFF_BYTES));
  const utf16 = utf16Kind(start);
  if (utf16 !== undefined) throw dataError(file, `is ${utf16} text; save the CSV as UTF-8`);
  const whole = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  return streamFrom(Readable.from([whole]), file, sink, { delimiter: sniffDelimiter(start), bytes: bytes.length }, {});
}

async function streamFrom(source: Readable, file: string, sink: RecordSink, dialect: CsvDialect, options: StreamOptions): Promise<CsvDialect> {
  const lines = new LineCounter();
  const decoder = new TextDecoder('utf-8', { fatal: true });
  let bytesRead = 0;
  let first = true;
  const hash = createHash('sha256');
  const checked = async function* (chunks: AsyncIterable<Buffer>): AsyncGenerator<Buffer> {
    for await (let chunk of chunks) {
      hash.update(chunk);
      if (first && chunk[0] === 0xef && chunk[1] === 0xbb && chunk[2] === 0xbf) chunk = chunk.subarray(3);
      first = false;
      const nul = chunk.indexOf(0);
      if (nul >= 0) throw dataError(file, `line ${lines.lineAt(chunk, nul)}: contains a NUL byte; this looks like a binary file, expected UTF-8 CSV text`);
      try {
        decoder.decode(chunk, { stream: true });
      } catch {
        throw dataError(file, `line ${lines.firstInvalidUtf8Line(chunk)}: is not valid UTF-8 text; save the CSV as UTF-8`);
      }
      lines.append(chunk);
      bytesRead += chunk.length;
      options.onEvent?.({ type: 'reading', file, bytesRead, totalBytes: dialect.bytes });
      yield chunk;
    }
    try {
      decoder.decode();
    } catch {
      throw dataError(file, `line ${lines.totalLines()}: ends inside a UTF-8 character; save the CSV as UTF-8`);
    }
  };

  let records = 0;
  const parser = parse({
    delimiter: dialect.delimiter,
    // Trims spaces around delimiters only; text inside quotes is kept as written.
    trim: true,
    skip_empty_lines: true,
    // Ragged rows are reported by the sink with both field counts.
    relax_column_count: true,
    on_record: (record: string[], context: { bytes: number }) => {
      const line = lines.recordStart(context.bytes);
      if (records++ === 0) sink.header(record, line);
      else sink.row(record, line);
      return undefined;
    },
  });
  const discard = new Writable({ objectMode: true, write: (_chunk, _encoding, done) => done() });
  try {
    if (options.signal) await pipeline(source, checked, parser, discard, { signal: options.signal });
    else await pipeline(source, checked, parser, discard);
  } catch (error) {
    if (error instanceof CsvError) throw dataError(file, csvProblem(error, lines.pendingRecordLine()));
    throw error;
  }
  if (records === 0) throw dataError(file, 'the file has no rows; expected a header row and data rows');
  return { ...dialect, sha256: hash.digest('hex') };
}

