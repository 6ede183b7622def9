import { access, constants } from 'node:fs/promises';
import path from 'node:path';

/**
 * A write error as the user should hear of it. Creating a folder on a read-only file system or in a
 * folder one may not write to can fail with ENOENT; the nearest existing folder then says why
 * (EROFS, EACCES), and that error is returned instead. Any other error is returned as it is.
 */
export async function writeFailure(error: unknown, target: string): Promise<unknown> {
  if ((error as NodeJS.ErrnoException | undefined)?.code !== 'ENOENT') return error;
  let folder = path.dirname(path.resolve(target));
  for (;;) {
    const exists = await access(folder).then(() => true, () => false);
    if (exists) return access(folder, constants.W_OK).then(() => error, (denied: unknown) => denied);
    const parent = path.dirname(folder);
    if (parent === folder) return error;
    folder = parent;
  }
}
