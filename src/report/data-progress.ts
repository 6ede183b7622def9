import type { DataEvent, DataObserver } from '../data/events.js';

export interface DataProgressOptions {
  /** Where to write (the CLI gives stderr): a terminal gets one live line, anything else a few lines for large files. */
  stream: NodeJS.WriteStream | NodeJS.WritableStream;
  /** Files at least this large get progress lines when the stream is not a terminal. @default 16 MiB */
  largeFileBytes?: number;
  /** Least time between two redraws of the live line. @default 100 */
  redrawMilliseconds?: number;
}

const megabytes = (bytes: number): string => (bytes / 1e6).toFixed(1);
const STEPS: Record<Extract<DataEvent, { type: 'preparing' }>['step'], string> = { typing: 'typing columns', splitting: 'splitting', encoding: 'encoding splits' };

/**
 * A data observer that shows reading and preparing: percentage of the file read, the preparation
 * step, and the time it took; every note on how an odd input was read becomes a `note:` line, every
 * warning about a column that should likely not be a feature a `warning:` line.
 * Small files on a non-terminal stream show only the notes, so scripted runs stay quiet.
 */
export function dataProgressObserver(options: DataProgressOptions): DataObserver {
  const display = new DataProgressDisplay(options);
  return (event) => display.show(event);
}

/** The state of the data-loading display: whether the file is large and what the live line shows. */
class DataProgressDisplay {
  private readonly stream: NodeJS.WritableStream;
  private readonly isTerminal: boolean;
  private readonly largeFileBytes: number;
  private readonly redraw: number;
  private large = false;
  private live = false;
  private lastDraw = 0;
  private quarter = 0;
  private preparingShown = false;

  constructor(options: DataProgressOptions) {
    this.stream = options.stream;
    this.isTerminal = 'isTTY' in options.stream && options.stream.isTTY === true;
    this.largeFileBytes = options.largeFileBytes ?? 16 * 2 ** 20;
    this.redraw = options.redrawMilliseconds ?? 100;
  }

  show(event: DataEvent): void {
    switch (event.type) {
      case 'reading':
        return this.reading(event);
      case 'preparing':
        return this.preparing(event);
      case 'note':
      case 'warning':
        this.endLive();
        this.stream.write(`${event.type}: ${event.message}\n`);
        return;
      case 'ready':
        this.endLive();
        if (this.isTerminal || this.large) this.stream.write(`data ready: ${event.rows.toLocaleString('en-US')} rows x ${event.columns} columns of ${event.file} in ${event.seconds.toFixed(1)} s\n`);
        return;
      default:
        return;
    }
  }

  private reading(event: Extract<DataEvent, { type: 'reading' }>): void {
    this.large = event.totalBytes >= this.largeFileBytes;
    const percent = event.totalBytes > 0 ? Math.floor((100 * event.bytesRead) / event.totalBytes) : 100;
    const text = `reading ${event.file}: ${percent}% (${megabytes(event.bytesRead)} of ${megabytes(event.totalBytes)} MB)`;
    if (this.isTerminal) this.draw(text, event.bytesRead === event.totalBytes);
    else if (this.large && Math.floor(percent / 25) > this.quarter) {
      this.quarter = Math.floor(percent / 25);
      this.stream.write(`${text}\n`);
    }
  }

  private preparing(event: Extract<DataEvent, { type: 'preparing' }>): void {
    const text = `preparing ${event.file}: ${STEPS[event.step]}${event.total > 1 ? ` ${event.done + 1}/${event.total}` : ''}`;
    if (this.isTerminal) this.draw(text);
    else if (this.large && !this.preparingShown) {
      this.preparingShown = true;
      this.stream.write(`preparing ${event.file}: typing columns, splitting, encoding\n`);
    }
  }

  private draw(text: string, force = false): void {
    const now = Date.now();
    if (!force && now - this.lastDraw < this.redraw) return;
    this.lastDraw = now;
    this.stream.write(`\r\u001b[2K${text}`);
    this.live = true;
  }

  private endLive(): void {
    if (this.live) this.stream.write('\r\u001b[2K');
    this.live = false;
  }
}
