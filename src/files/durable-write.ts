import { randomBytes } from 'node:crypto';
import { open, rename, unlink } from 'node:fs/promises';
import path from 'node:path';

/**
 * Replace `file` with `data`, whole or not at all, and durably: the data goes to a temporary file
 * beside it, is flushed to disk, renamed over the file, and the folder is flushed. Every byte is
 * written or the call rejects (a full disk rejects with ENOSPC and leaves the old file as it was).
 *
 * Written here rather than taken from write-file-atomic, whose single `fs.write` call takes a short
 * write on a nearly full disk for success and renames a truncated file into place.
 */
export async function writeFileDurably(file: string, data: string | Uint8Array): Promise<void> {
  const temporary = path.join(path.dirname(file), `.${path.basename(file)}.${randomBytes(6).toString('hex')}.tmp`);
  let handle: Awaited<ReturnType<typeof open>> | undefined;
  try {
    handle = await open(temporary, 'w');
    // FileHandle.writeFile writes until every byte is written, and rejects on any error.
    await handle.writeFile(data);
    await handle.sync();
    await handle.close();
    handle = undefined;
    await rename(temporary, file);
  } catch (error) {
    await handle?.close().catch(() => undefined);
    await unlink(temporary).catch(() => undefined);
    throw error;
  }
  await syncFolder(path.dirname(file));
}

/** Flush a folder's entries (a rename) to disk; file systems that cannot do so are let be. */
async function syncFolder(dir: string): Promise<void> {
  const handle = await open(dir, 'r').catch(() => undefined);
  if (!handle) return;
  try {
    await handle.sync();
  } catch {
    // Some file systems refuse fsync on a folder; the rename itself is still atomic.
  } finally {
    await handle.close();
  }
}
