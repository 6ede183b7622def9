import { existsSync } from 'node:fs';
import { mkdir, readdir, rename, rm } from 'node:fs/promises';
import path from 'node:path';
import { threadId } from 'node:worker_threads';
import { outputFolderError, UserError } from '../core/errors.js';
import { writeFailure } from './write-cause.js';

/**
 * Fills a folder through `fill(partial)` in a sibling temporary folder, then renames it to `target`,
 * so `target` is either the complete new folder or untouched: on any error the temporary folder is
 * removed and nothing is left behind. An existing `target` is replaced only when `replaceable`
 * says it holds an earlier result (never a folder of the user's own).
 */
export async function writeFolderAtomically<T>(
  target: string,
  replaceable: (existing: string) => boolean,
  fill: (partial: string) => Promise<T>,
  /** What an earlier result is called in the refusal, e.g. "export". @default 'export' */
  kind = 'export',
): Promise<T> {
  const resolved = path.resolve(target);
  if (existsSync(resolved)) {
    const entries = await readdir(resolved).catch(() => undefined);
    if (entries === undefined) throw new UserError('E_OUT_TAKEN', `${target}: exists and is not a folder; choose another --out`);
    if (entries.length > 0 && !replaceable(resolved)) {
      throw new UserError('E_OUT_TAKEN', `${target}: is a non-empty folder that does not hold an earlier ${kind}; choose another --out or remove it`);
    }
  }
  const partial = `${resolved}.partial-${process.pid}-${threadId}`;
  try {
    await mkdir(path.dirname(resolved), { recursive: true });
    await rm(partial, { recursive: true, force: true });
    await mkdir(partial);
  } catch (error) {
    throw outputFolderError(await writeFailure(error, partial), target) ?? error;
  }
  let result: T;
  try {
    result = await fill(partial);
    // rename() cannot replace a non-empty folder: move the old one aside first.
    const previous = `${resolved}.previous-${process.pid}-${threadId}`;
    const replaced = await rename(resolved, previous).then(
      () => true,
      () => false,
    );
    await rename(partial, resolved);
    if (replaced) await rm(previous, { recursive: true, force: true });
  } catch (error) {
    await rm(partial, { recursive: true, force: true });
    throw error;
  }
  return result;
}
