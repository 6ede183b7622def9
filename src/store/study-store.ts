import { mkdir, stat } from 'node:fs/promises';
import path from 'node:path';
import { Low } from 'lowdb';
import { UserError } from '../core/errors.js';
import { READABLE_VERSIONS, migrateStudyDocument } from './migrate.js';
import { STUDY_FILE_NAME, runPaths } from './run-dir.js';
import type { WriteStepHook } from './file-adapter.js';
import { StudyFileAdapter } from './study-file.js';
import { checkFieldTypes } from './study-file-shape.js';
import { renamedDefinitionNote, renamedKeysNote, renameDefinitionKeys, renameSamplerKeys } from '../study/renamed-keys.js';
import type { StudyDocument } from './types.js';

export { STUDY_FILE_NAME };

/** The study file of a run directory. */
export function studyFilePath(dir: string): string {
  return runPaths.studyFile(dir);
}

function checkShape(data: unknown, file: string): StudyDocument {
  const doc = data as Partial<StudyDocument> | null;
  if (!doc || typeof doc !== 'object' || doc.format !== 'rungwise-study' || !Array.isArray(doc.trials)) {
    throw new UserError('E_STUDY_CORRUPT', `${file}: not a rungwise study file (no "format": "rungwise-study" with a trials list)`);
  }
  const version = doc.version as number | undefined;
  if (version === undefined || !READABLE_VERSIONS.includes(version)) {
    throw new UserError(
      'E_STUDY_VERSION',
      `${file}: study file version ${String(version)} is not supported (this rungwise reads versions ${READABLE_VERSIONS.join(', ')})`,
    );
  }
  return checkFieldTypes(migrateStudyDocument({ ...doc, version }), file);
}

/** A study file written before keys were renamed (sampler options, `workers`), read with the new names (and a note). */
function renameOldSamplerOptions(doc: StudyDocument, file: string): { doc: StudyDocument; notes: string[] } {
  const advice = 'the study file keeps the old names until resume saves it';
  const top = renameDefinitionKeys(doc.definition);
  const definition = top.definition as StudyDocument['definition'];
  const { sampler, renamed } = renameSamplerKeys(definition.sampler);
  const notes = [renamedDefinitionNote(`${file}: definition`, top.renamed, advice), renamedKeysNote(`${file}: definition`, renamed, advice)].filter((note): note is string => note !== undefined);
  if (notes.length === 0) return { doc, notes: [] };
  return { doc: { ...doc, definition: { ...definition, sampler: sampler as StudyDocument['definition']['sampler'] } }, notes };
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
    /** What opening the study found that the user should know (one line each), e.g. a torn curve-log line. */
    readonly notes: readonly string[] = [],
  ) {}

  get file(): string {
    return studyFilePath(this.dir);
  }

  get doc(): StudyDocument {
    return this.db.data;
  }

  /** Create the run directory and write a new study file. */
  static async create(dir: string, doc: StudyDocument, onWriteStep?: WriteStepHook): Promise<StudyStore> {
    await mkdir(dir, { recursive: true });
    const db = new Low(new StudyFileAdapter(studyFilePath(dir), onWriteStep), doc);
    await db.write();
    return new StudyStore(db, dir);
  }

  /** Open an existing study file; a missing, corrupted or foreign file is a {@link UserError}. */
  static async open(dir: string, onWriteStep?: WriteStepHook): Promise<StudyStore> {
    const file = studyFilePath(dir);
    const kind = await stat(dir).then(
      (found) => (found.isDirectory() ? 'folder' : 'file'),
      () => 'nothing',
    );
    if (kind === 'file') throw new UserError('E_STUDY_FILE', `${dir}: is a file, not a run directory; name the folder that holds study.json`);
    const adapter = new StudyFileAdapter(file, onWriteStep);
    const data = await adapter.read();
    if (data === null) {
      throw new UserError('E_STUDY_FILE', `${file}: no study file here; run \`rungwise run <study.json> --out ${dir}\` first`);
    }
    const { doc, notes } = renameOldSamplerOptions(checkShape(data, file), file);
    const db = new Low(adapter, doc);
    return new StudyStore(db, dir, [...adapter.notes, ...notes]);
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
