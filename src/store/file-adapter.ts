import { link, readFile, unlink } from 'node:fs/promises';
import { writeFileDurably } from '../files/durable-write.js';
import type { Adapter } from 'lowdb';
import { UserError } from '../core/errors.js';

/** A point inside a study-file write: after the old `.prev` is removed, after the current file is linked to it. */
export type WriteStep = 'after-unlink' | 'after-link';

/**
 * Called at each {@link WriteStep} of every write with the write's 1-based number. Tests pass one that
 * kills the process there, to prove that a kill while a write is under way leaves a valid study file
 * (see `runner/faults.ts`); the shipped CLI passes none.
 */
export type WriteStepHook = (step: WriteStep, write: number) => void;

/** Name of the copy of the previous good version, kept beside the study file. */
export const PREVIOUS_SUFFIX = '.prev';

/**
 * A lowdb adapter whose every write is atomic and durable: the new version goes to a temporary
 * file that is flushed to disk and renamed over the old one, so a kill at any instant leaves the
 * old or the new version. Before the rename the old version is hard-linked to `<file>.prev`,
 * so the last good version is always kept beside the file.
 */
export class DurableJsonFile<T> implements Adapter<T> {
  constructor(
    readonly file: string,
    private readonly onWriteStep?: WriteStepHook,
  ) {}

  async read(): Promise<T | null> {
    let text: string;
    try {
      text = await readFile(this.file, 'utf8');
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code === 'ENOENT') return null;
      throw error;
    }
    try {
      return JSON.parse(text) as T;
    } catch {
      const reason = text.length === 0 ? 'it is empty' : `it is not valid JSON (${text.length} bytes, truncated or corrupted)`;
      throw new UserError(
        'E_STUDY_CORRUPT',
        `${this.file}: cannot open the study file: ${reason}; it was left as it is; the last good version is ${this.file}${PREVIOUS_SUFFIX} (copy it over ${this.file} to resume from it)`,
      );
    }
  }

  async write(data: T): Promise<void> {
    await this.writeText(JSON.stringify(data));
  }

  /** Write an already serialised document (callers serialise at once, before the document can change). */
  async writeText(text: string): Promise<void> {
    const previous = `${this.file}${PREVIOUS_SUFFIX}`;
    this.writes += 1;
    await unlink(previous).catch(() => undefined);
    this.onWriteStep?.('after-unlink', this.writes);
    await link(this.file, previous).catch(() => undefined);
    this.onWriteStep?.('after-link', this.writes);
    await writeFileDurably(this.file, text);
  }

  private writes = 0;
}
