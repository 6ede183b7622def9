import { execFile } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');

/** The files `npm pack` would publish (scripts are not run: the build is already there). */
async function packedFiles(): Promise<string[]> {
  const { stdout } = await promisify(execFile)('npm', ['pack', '--dry-run', '--json', '--ignore-scripts'], { cwd: ROOT, env: { ...process.env, npm_config_loglevel: 'error' } });
  const [pack] = JSON.parse(stdout) as { files: { path: string }[] }[];
  return pack!.files.map((file) => file.path);
}

describe('the published package', () => {
  it('holds the CLI, the library, its thread entry point, the training engine, the schema, the demo study, the examples and the LICENSE; no bench, scripts or source maps', async () => {
    const files = await packedFiles();
    for (const needed of ['LICENSE', 'README.md', 'package.json', 'bin/rungwise.js', 'dist/src/index.js', 'dist/src/index.d.ts', 'dist/src/cli/main.js', 'dist/threads/trial-thread.js', 'dist/threads/esm-entry.cjs', 'dist/engine.wasm', 'schema/study.schema.json', 'studies/demo/study.json', 'studies/demo/pump-logs.csv', 'examples/predict.mjs', 'docs/library.md']) {
      expect(files, needed).toContain(needed);
    }
    expect(files.filter((file) => /(^|\/)(bench|scripts)\//.test(file))).toEqual([]);
    expect(files.filter((file) => file.endsWith('.map'))).toEqual([]);
    expect(files.filter((file) => file.startsWith('test') || file.startsWith('src/'))).toEqual([]);
  });

  it('points no published JavaScript file at a source map', async () => {
    const files = (await packedFiles()).filter((file) => file.endsWith('.js'));
    const withMap = files.filter((file) => existsSync(path.join(ROOT, file)) && readFileSync(path.join(ROOT, file), 'utf8').includes('sourceMappingURL'));
    expect(withMap).toEqual([]);
  });

  it('is under the MIT licence its package.json names, in a LICENSE file', () => {
    const manifest = JSON.parse(readFileSync(path.join(ROOT, 'package.json'), 'utf8')) as { license: string };
    expect(manifest.license).toBe('MIT');
    expect(readFileSync(path.join(ROOT, 'LICENSE'), 'utf8')).toMatch(/^MIT License\n/);
  });
});
