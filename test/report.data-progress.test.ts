import { PassThrough } from 'node:stream';
import { describe, expect, it } from 'vitest';
import type { DataEvent } from '../src/data/events.js';
import { dataProgressObserver } from '../src/report/data-progress.js';

function capture(isTTY: boolean): { stream: NodeJS.WritableStream; text: () => string } {
  const stream = new PassThrough();
  let text = '';
  stream.on('data', (chunk: Buffer) => (text += chunk.toString()));
  return { stream: Object.assign(stream, { isTTY }), text: () => text };
}

function loading(totalBytes: number): DataEvent[] {
  const reading: DataEvent[] = [1, 2, 3, 4, 5, 6, 7, 8].map((eighth) => ({ type: 'reading', file: 'big.csv', bytesRead: (totalBytes * eighth) / 8, totalBytes }));
  return [
    ...reading,
    { type: 'preparing', file: 'big.csv', step: 'typing', done: 0, total: 30 },
    { type: 'preparing', file: 'big.csv', step: 'encoding', done: 0, total: 3 },
    { type: 'note', file: 'big.csv', message: "big.csv: read with ';' as the delimiter" },
    { type: 'ready', file: 'big.csv', rows: 200_000, columns: 30, seconds: 4.25 },
  ];
}

describe('the data progress display', () => {
  it('writes a line per quarter read, one for preparing and one when ready for a large file on a non-terminal', () => {
    const out = capture(false);
    const observe = dataProgressObserver({ stream: out.stream, largeFileBytes: 1000 });
    for (const event of loading(8000)) observe(event);
    expect(out.text().split('\n').filter(Boolean)).toEqual([
      'reading big.csv: 25% (0.0 of 0.0 MB)',
      'reading big.csv: 50% (0.0 of 0.0 MB)',
      'reading big.csv: 75% (0.0 of 0.0 MB)',
      'reading big.csv: 100% (0.0 of 0.0 MB)',
      'preparing big.csv: typing columns, splitting, encoding',
      "note: big.csv: read with ';' as the delimiter",
      'data ready: 200,000 rows x 30 columns of big.csv in 4.3 s',
    ]);
  });

  it('writes only the notes for a small file on a non-terminal', () => {
    const out = capture(false);
    const observe = dataProgressObserver({ stream: out.stream });
    for (const event of loading(8000)) observe(event);
    expect(out.text()).toBe("note: big.csv: read with ';' as the delimiter\n");
  });

  it('redraws one line on a terminal and clears it before a note', () => {
    const out = capture(true);
    const observe = dataProgressObserver({ stream: out.stream, redrawMilliseconds: 0 });
    for (const event of loading(8000)) observe(event);
    const text = out.text();
    expect(text).toContain('\r\u001b[2Kreading big.csv: 100%');
    expect(text).toContain('\r\u001b[2Kpreparing big.csv: typing columns 1/30');
    expect(text).toContain("\r\u001b[2Knote: big.csv: read with ';' as the delimiter\n");
    expect(text.endsWith('data ready: 200,000 rows x 30 columns of big.csv in 4.3 s\n')).toBe(true);
  });

  it('writes a warning about a column as a warning: line, on a terminal after clearing the live line', () => {
    const warning: DataEvent = { type: 'warning', file: 'big.csv', message: "big.csv: column 'visit_date' looks like a date" };
    const plain = capture(false);
    dataProgressObserver({ stream: plain.stream })(warning);
    expect(plain.text()).toBe("warning: big.csv: column 'visit_date' looks like a date\n");
    const terminal = capture(true);
    const observe = dataProgressObserver({ stream: terminal.stream, redrawMilliseconds: 0 });
    observe({ type: 'preparing', file: 'big.csv', step: 'typing', done: 0, total: 3 });
    observe(warning);
    expect(terminal.text()).toContain("\r\u001b[2Kwarning: big.csv: column 'visit_date' looks like a date\n");
  });
});
