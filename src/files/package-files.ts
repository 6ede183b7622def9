/** Files of the rungwise package itself, found from this module (in `dist/src/files/` or, under tests, `src/files/`). */
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

let root: string | undefined;

/** The package's root folder: the nearest folder above this module whose package.json is rungwise's. */
export function packageRoot(): string {
  if (root) return root;
  let dir = path.dirname(fileURLToPath(import.meta.url));
  for (;;) {
    const manifest = path.join(dir, 'package.json');
    if (existsSync(manifest) && (JSON.parse(readFileSync(manifest, 'utf8')) as { name?: string }).name === 'rungwise') return (root = dir);
    const parent = path.dirname(dir);
    if (parent === dir) throw new Error('rungwise: package.json not found above the installed files');
    dir = parent;
  }
}

/** The version in rungwise's package.json. */
export function packageVersion(): string {
  return (JSON.parse(readFileSync(path.join(packageRoot(), 'package.json'), 'utf8')) as { version: string }).version;
}
