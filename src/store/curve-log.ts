import { open, readFile, truncate } from 'node:fs/promises';
import { UserError } from '../core/errors.js';
import type { CurvePoint } from '../core/trial.js';

/** One line of the curve log: a trial's whole curve as of that moment (a later line for the same trial wins). */
export interface CurveRecord {
  trial: number;
  curve: CurvePoint[];
}

/**
 * The per-epoch curves of a study, kept out of the study file so that rewriting the study file
 * does not cost in proportion to every epoch of every trial. Append-only JSON lines, each flushed
 * to disk before the study file that depends on it is written. A last line cut short (a kill or a
 * full disk in the middle of an append) is ignored, said in {@link CurveLog.tornLine}, and cut off
 * before the next append; the study file written before it still says its trial is `running`, so
 * that trial's job runs again on resume.
 */
export class CurveLog {
  /** 1-based number of a last line found cut short by {@link CurveLog.read}, if any. */
  tornLine: number | undefined;
  /** Bytes of whole lines read; a torn tail beyond it is cut off before the next append. */
  private wholeBytes: number | undefined;

  constructor(readonly file: string) {}

  /** Every trial's latest curve. A missing log is an empty one. */
  async read(): Promise<Map<number, CurvePoint[]>> {
    let text: string;
    try {
      text = await readFile(this.file, 'utf8');
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code === 'ENOENT') return new Map();
      throw error;
    }
    const curves = new Map<number, CurvePoint[]>();
    const lines = text.split('\n');
    this.tornLine = undefined;
    this.wholeBytes = undefined;
    lines.forEach((line, index) => {
      if (line === '') return;
      let record: CurveRecord;
      try {
        record = JSON.parse(line) as CurveRecord;
      } catch {
        if (index === lines.length - 1) {
          // Cut short while appending: no newline ends it.
          this.tornLine = index + 1;
          this.wholeBytes = Buffer.byteLength(text) - Buffer.byteLength(line);
          return;
        }
        throw new UserError('E_STUDY_CORRUPT', `${this.file}: line ${index + 1}: not valid JSON; the curve log is corrupted`);
      }
      curves.set(record.trial, record.curve);
    });
    return curves;
  }

  /** The JSON lines of `records`, serialised at once (the caller's objects may change while the append waits). */
  static lines(records: readonly CurveRecord[]): string {
    return records.map((r) => `${JSON.stringify(r)}\n`).join('');
  }

  /** Append lines made by {@link CurveLog.lines} and flush them to disk. */
  async append(lines: string): Promise<void> {
    if (lines === '') return;
    if (this.wholeBytes !== undefined) {
      await truncate(this.file, this.wholeBytes);
      this.wholeBytes = undefined;
    }
    const handle = await open(this.file, 'a');
    try {
      await handle.appendFile(lines);
      await handle.sync();
    } finally {
      await handle.close();
    }
  }
}
