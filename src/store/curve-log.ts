import { open, readFile } from 'node:fs/promises';
import { UserError } from '../errors.js';
import type { CurvePoint } from './types.js';

/** One line of the curve log: a trial's whole curve as of that moment (a later line for the same trial wins). */
export interface CurveRecord {
  trial: number;
  curve: CurvePoint[];
}

/**
 * The per-epoch curves of a study, kept out of the study file so that rewriting the study file
 * does not cost in proportion to every epoch of every trial. Append-only JSON lines, each flushed
 * to disk before the study file that depends on it is written; a last line cut short by a kill is
 * ignored (its trial is still `running` in the study file and runs again on resume).
 */
export class CurveLog {
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
    lines.forEach((line, index) => {
      if (line === '') return;
      let record: CurveRecord;
      try {
        record = JSON.parse(line) as CurveRecord;
      } catch {
        if (index === lines.length - 1) return; // cut short by a kill while appending
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
    const handle = await open(this.file, 'a');
    try {
      await handle.appendFile(lines);
      await handle.sync();
    } finally {
      await handle.close();
    }
  }
}
