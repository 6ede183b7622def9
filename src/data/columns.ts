import { checkFieldCount, checkHeader, noDataRows, parseNumber } from './csv.js';
import type { RecordSink } from './source.js';

/** An Int32Array or Float64Array that grows; `view()` is the filled part without a copy. */
class Growable<T extends Int32Array | Float64Array> {
  length = 0;
  constructor(
    private array: T,
    private readonly make: (size: number) => T,
  ) {}

  push(value: number): void {
    if (this.length === this.array.length) this.reserve(Math.max(16, Math.ceil(this.array.length * 1.5)));
    this.array[this.length++] = value;
  }

  /** Makes room for `size` values in all. */
  reserve(size: number): void {
    if (size <= this.array.length) return;
    const bigger = this.make(size);
    bigger.set(this.array.subarray(0, this.length));
    this.array = bigger;
  }

  view(): T {
    return this.array.subarray(0, this.length) as T;
  }
}

const int32 = (size: number): Int32Array => new Int32Array(size);
const float64 = (size: number): Float64Array => new Float64Array(size);

/**
 * One CSV column as read, before it is typed. Cells that spell a plain finite number are kept as
 * numbers; every other cell (missing, text, 'Infinity', '3,5', ...) as an index into `spellings`.
 * A column read as text keeps every cell as a spelling.
 */
export interface RawColumn {
  name: string;
  /** Number of each row; NaN where the cell is not a plain number (every row of a text column). */
  numbers: Float64Array;
  /** Rows whose cell is kept as a spelling, ascending, and the index of each one's spelling. */
  spelledRows: Int32Array;
  spelledCodes: Int32Array;
  spellings: string[];
  /** How many cells are plain numbers. */
  numberCount: number;
  /** Whether some number cell has a decimal point. */
  decimalPoint: boolean;
  /** Every cell is kept as a spelling (`spelledRows` is every row). */
  asText: boolean;
}

/** The columns of a CSV file with the line of each row. */
export interface ColumnTable {
  file: string;
  columns: string[];
  rows: number;
  /** 1-based line of each row. */
  lines: Int32Array;
  column: Map<string, RawColumn>;
}

class ColumnBuilder {
  readonly numbers = new Growable(new Float64Array(0), float64);
  readonly spelledRows = new Growable(new Int32Array(0), int32);
  readonly spelledCodes = new Growable(new Int32Array(0), int32);
  readonly codes = new Map<string, number>();
  readonly spellings: string[] = [];
  numberCount = 0;
  decimalPoint = false;

  constructor(
    readonly name: string,
    readonly asText: boolean,
  ) {}

  private spell(row: number, text: string): void {
    let code = this.codes.get(text);
    if (code === undefined) {
      code = this.spellings.push(text) - 1;
      this.codes.set(text, code);
    }
    this.spelledRows.push(row);
    this.spelledCodes.push(code);
  }

  add(row: number, text: string): void {
    if (this.asText) {
      this.spell(row, text);
      return;
    }
    const number = parseNumber(text);
    if (number === undefined) {
      this.numbers.push(Number.NaN);
      this.spell(row, text);
      return;
    }
    this.numbers.push(number);
    this.numberCount++;
    if (!this.decimalPoint && text.includes('.')) this.decimalPoint = true;
  }

  reserve(rows: number): void {
    if (this.asText) {
      this.spelledRows.reserve(rows);
      this.spelledCodes.reserve(rows);
    } else this.numbers.reserve(rows);
  }

  finish(rows: number): RawColumn {
    return {
      name: this.name,
      numbers: this.asText ? new Float64Array(rows).fill(Number.NaN) : this.numbers.view(),
      spelledRows: this.spelledRows.view(),
      spelledCodes: this.spelledCodes.view(),
      spellings: this.spellings,
      numberCount: this.numberCount,
      decimalPoint: this.decimalPoint,
      asText: this.asText,
    };
  }
}

export interface ColumnSinkOptions {
  /** Columns whose every cell is kept as written (class labels, categorical columns). */
  asText?: ReadonlySet<string>;
  /** Columns to keep at all; default every column. */
  only?: ReadonlySet<string>;
  /** Size of the file, to reserve room for the rows once the first rows show their length. */
  totalBytes?: number;
  /** Called with the header before any row is read; may throw to stop at once. */
  onHeader?: (columns: readonly string[]) => void;
}

const SAMPLE_ROWS = 1000;

/** Builds typed columns from streamed records without keeping the records. */
export class ColumnSink implements RecordSink {
  private columns: string[] = [];
  private builders: (ColumnBuilder | undefined)[] = [];
  private readonly lines = new Growable(new Int32Array(0), int32);
  private headerLine = 1;
  private sampleBytes = 0;

  constructor(
    private readonly file: string,
    private readonly options: ColumnSinkOptions = {},
  ) {}

  header(fields: string[], line: number): void {
    checkHeader(this.file, fields, line);
    this.options.onHeader?.(fields);
    this.columns = fields;
    this.headerLine = line;
    const { only, asText } = this.options;
    this.builders = fields.map((name) => (only === undefined || only.has(name) ? new ColumnBuilder(name, asText?.has(name) ?? false) : undefined));
  }

  row(fields: string[], line: number): void {
    checkFieldCount(this.file, fields, this.columns.length, line);
    const row = this.lines.length;
    this.lines.push(line);
    for (let c = 0; c < fields.length; c++) this.builders[c]?.add(row, fields[c]!);
    if (row < SAMPLE_ROWS && this.options.totalBytes !== undefined) {
      for (const field of fields) this.sampleBytes += field.length + 1;
      if (row === SAMPLE_ROWS - 1) this.reserve(Math.ceil((this.options.totalBytes / (this.sampleBytes / SAMPLE_ROWS)) * 1.05));
    }
  }

  private reserve(rows: number): void {
    this.lines.reserve(rows);
    for (const builder of this.builders) builder?.reserve(rows);
  }

  table(): ColumnTable {
    const rows = this.lines.length;
    if (rows === 0) throw noDataRows(this.file, this.headerLine);
    const column = new Map<string, RawColumn>();
    for (const builder of this.builders) if (builder !== undefined) column.set(builder.name, builder.finish(rows));
    return { file: this.file, columns: this.columns, rows, lines: this.lines.view(), column };
  }
}

/** The text of a cell of a column read as text. */
export function textAt(column: RawColumn, row: number): string {
  return column.spellings[column.spelledCodes[row]!]!;
}
