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
  const { stream } = options;
  const isTerminal = 'isTTY' in stream && stream.isTTY === true;
  const largeFileBytes = options.largeFileBytes ?? 16 * 2 ** 20;
  const redraw = options.redrawMilliseconds ?? 100;
  let large = false;
  let live = false;
  let lastDraw = 0;
  let quarter = 0;
  let preparingShown = false;

  const draw = (text: string, force = false): void => {
    const now = Date.now();
    if (!force && now - lastDraw < redraw) return;
    lastDraw = now;
    stream.write(`\r\u001b[2K${text}`);
    live = true;
  };
  const endLive = (): void => {
    if (live) stream.write('\r\u001b[2K');
    live = false;
  };

  return (event) => {
    switch (event.type) {
      case 'reading': {
        large = event.totalBytes >= largeFileBytes;
        const percent = event.totalBytes > 0 ? Math.floor((100 * event.bytesRead) / event.totalBytes) : 100;
        const text = `reading ${event.file}: ${percent}% (${megabytes(event.bytesRead)} of ${megabytes(event.totalBytes)} MB)`;
        if (isTerminal) draw(text, event.bytesRead === event.totalBytes);
        else if (large && Math.floor(percent / 25) > quarter) {
          quarter = Math.floor(percent / 25);
          stream.write(`${text}\n`);
        }
        break;
      }
      case 'preparing': {
        const text = `preparing ${event.file}: ${STEPS[event.step]}${event.total > 1 ? ` ${event.done + 1}/${event.total}` : ''}`;
        if (isTerminal) draw(text);
        else if (large && !preparingShown) {
          preparingShown = true;
          stream.write(`preparing ${event.file}: typing columns, splitting, encoding\n`);
        }
        break;
      }
      case 'note':
        endLive();
        stream.write(`note: ${event.message}\n`);
        break;
      case 'warning':
        endLive();
        stream.write(`warning: ${event.message}\n`);
        break;
      case 'ready':
        endLive();
        if (isTerminal || large) stream.write(`data ready: ${event.rows.toLocaleString('en-US')} rows x ${event.columns} columns of ${event.file} in ${event.seconds.toFixed(1)} s\n`);
        break;
      default:
        break;
    }
  };
}
