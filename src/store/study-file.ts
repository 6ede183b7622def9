import { CURVE_LOG_NAME, runPaths } from './run-dir.js';
import path from 'node:path';
import type { Adapter } from 'lowdb';
import { CurveLog, type CurveRecord } from './curve-log.js';
import { DurableJsonFile, type WriteStepHook } from './file-adapter.js';
import type { CurvePoint, TrialRecord } from '../core/trial.js';
import type { StudyDocument } from './types.js';

/** Name of the curve log inside a run directory. */


/** The study file as written: trials without their curves (those are in the curve log). */
type StoredDocument = Omit<StudyDocument, 'trials'> & { trials: (Omit<TrialRecord, 'curve'> & { curve?: CurvePoint[] })[]; curveLog?: string };

/**
 * The lowdb adapter of a study: the document in `study.json` (atomic, durable, previous version kept)
 * and the curves in `curves.jsonl` beside it. Callers see one document with curves in every trial.
 */
export class StudyFileAdapter implements Adapter<StudyDocument> {
  private readonly document: DurableJsonFile<StoredDocument>;
  private readonly curves: CurveLog;
  /** What reading found that the user should know (a torn curve-log line, a curve shorter than its trial). */
  notes: string[] = [];
  /** Last curve written per trial: a curve is appended again only when its array or last point changed. */
  private readonly written = new Map<number, { length: number; last: CurvePoint | undefined }>();

  constructor(
    readonly file: string,
    onWriteStep?: WriteStepHook,
  ) {
    this.document = new DurableJsonFile<StoredDocument>(file, onWriteStep);
    this.curves = new CurveLog(runPaths.curveLog(path.dirname(file)));
  }

  async read(): Promise<StudyDocument | null> {
    const stored = await this.document.read();
    if (stored === null) return null;
    if (!Array.isArray(stored.trials)) return stored as unknown as StudyDocument;
    const curves = stored.curveLog ? await this.curves.read() : new Map<number, CurvePoint[]>();
    const { curveLog: _curveLog, ...rest } = stored;
    this.notes = [];
    if (this.curves.tornLine !== undefined) {
      this.notes.push(`${this.curves.file}: line ${this.curves.tornLine} was cut short (the process stopped while writing it); it is ignored and removed at the next write`);
    }
    const trials = stored.trials.map((trial) => {
      const curve = curves.get(trial.id) ?? trial.curve ?? [];
      this.written.set(trial.id, { length: curve.length, last: curve.at(-1) });
      const expected = trial.status === 'diverged' ? trial.epochsTrained : trial.status === 'training' ? 0 : trial.epochsTrained;
      if (curve.length < expected) {
        this.notes.push(`${this.curves.file}: trial ${trial.id} has ${curve.length} of its ${expected} epochs recorded (the rest of its curve was lost); resume runs its last job again when only that job's epochs are missing`);
      }
      return { ...trial, curve };
    });
    return { ...rest, trials } as StudyDocument;
  }

  async write(data: StudyDocument): Promise<void> {
    const changed: CurveRecord[] = [];
    for (const trial of data.trials) {
      const seen = this.written.get(trial.id);
      if (!seen && trial.curve.length === 0) continue; // nothing to record yet
      if (!seen || seen.length !== trial.curve.length || seen.last !== trial.curve.at(-1)) {
        changed.push({ trial: trial.id, curve: trial.curve });
      }
    }
    // Serialise both now: the run loop keeps changing the document while the writes below wait, and
    // the study file and the curve log must describe the same moment.
    const lines = CurveLog.lines(changed);
    const stored: StoredDocument = { ...data, curveLog: CURVE_LOG_NAME, trials: data.trials.map(({ curve: _curve, ...trial }) => trial) };
    const text = JSON.stringify(stored);
    for (const record of changed) this.written.set(record.trial, { length: record.curve.length, last: record.curve.at(-1) });
    // Curves reach the disk before the study file that counts on them.
    await this.curves.append(lines);
    await this.document.writeText(text);
  }
}
