import { link, readFile, unlink } from 'node:fs/promises';
import writeFileAtomic from 'write-file-atomic';
import type { Adapter } from 'lowdb';
import { UserError } from '../errors.js';

/** Name of the copy of the previous good version, kept beside the study file. */
export const PREVIOUS_SUFFIX = '.prev';

/**
 * A lowdb adapter whose every write is atomic and durable: the new version goes to a temporary
 * file that is flushed to disk and renamed over the old one, so a kill at any instant leaves the
 * old or the new version. Before the rename the old version is hard-linked to `<file>.prev`,
 * so the last good version is always kept beside the file.
 */
export class DurableJsonFile<T> implements Adapter<T> {
  constructor(readonly file: string) {}

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
    const previous = `${this.file}${PREVIOUS_SUFFIX}`;
    await unlink(previous).catch(() => undefined);
    await link(this.file, previous).catch(() => undefined);
    await writeFileAtomic(this.file, JSON.stringify(data), { fsync: true });
  }
}
