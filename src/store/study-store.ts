import { mkdir } from 'node:fs/promises';
import path from 'node:path';
import { Low } from 'lowdb';
import { UserError } from '../errors.js';
import { StudyFileAdapter } from './study-file.js';
import type { StudyDocument } from './types.js';

/** File name of the study file inside a run directory. */
export const STUDY_FILE_NAME = 'study.json';

export function studyFilePath(dir: string): string {
  return path.join(dir, STUDY_FILE_NAME);
}

function checkShape(data: unknown, file: string): StudyDocument {
  const doc = data as Partial<StudyDocument> | null;
  if (!doc || typeof doc !== 'object' || doc.format !== 'rungwise-study' || !Array.isArray(doc.trials)) {
    throw new UserError('E_STUDY_CORRUPT', `${file}: not a rungwise study file (no "format": "rungwise-study" with a trials list)`);
  }
  if (doc.version !== 1) {
    throw new UserError('E_STUDY_VERSION', `${file}: study file version ${String(doc.version)} is not supported (this rungwise reads version 1)`);
  }
  return doc as StudyDocument;
}

/**
 * The study file of one run directory. The main thread is its only writer; writes are atomic
 * and coalesced: many `save()` calls while one write is under way become one further write.
 */
export class StudyStore {
  private pending: Promise<void> | undefined;
  private dirty = false;

  private constructor(
    private readonly db: Low<StudyDocument>,
    readonly dir: string,
  ) {}

  get file(): string {
    return studyFilePath(this.dir);
  }

  get doc(): StudyDocument {
    return this.db.data;
  }

  /** Create the run directory and write a new study file. */
  static async create(dir: string, doc: StudyDocument): Promise<StudyStore> {
    await mkdir(dir, { recursive: true });
    const db = new Low(new StudyFileAdapter(studyFilePath(dir)), doc);
    await db.write();
    return new StudyStore(db, dir);
  }

  /** Open an existing study file; a missing, corrupted or foreign file is a {@link UserError}. */
  static async open(dir: string): Promise<StudyStore> {
    const file = studyFilePath(dir);
    const adapter = new StudyFileAdapter(file);
    const data = await adapter.read();
    if (data === null) {
      throw new UserError('E_STUDY_FILE', `${file}: no study file here; run \`rungwise run <study.json> --out ${dir}\` first`);
    }
    const db = new Low(adapter, checkShape(data, file));
    return new StudyStore(db, dir);
  }

  /** Read a study file without keeping it open for writing. */
  static async read(dir: string): Promise<StudyDocument> {
    return (await StudyStore.open(dir)).doc;
  }

  /** Ask for the current document to be written; resolves once a write that includes this change is on disk. */
  save(): Promise<void> {
    this.dirty = true;
    if (!this.pending) this.pending = this.drain();
    return this.pending;
  }

  private async drain(): Promise<void> {
    try {
      while (this.dirty) {
        this.dirty = false;
        this.db.data.updatedAt = new Date().toISOString();
        await this.db.write();
      }
    } finally {
      this.pending = undefined;
    }
  }
}
