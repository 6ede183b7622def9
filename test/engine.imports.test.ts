/**
 * A thread that trains on the engine never loads tfjs or zod: the trial worker's static imports
 * (followed through the compiled dist/ files) reach neither; the tfjs path is imported only when a
 * request asks for it, and the study vocabularies come from `study/vocabulary.ts`, not the schema.
 */
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const DIST = fileURLToPath(new URL('../dist/', import.meta.url));

/** Every module reached from `file` by static `import ... from` / `export ... from`, and the bare packages among them. */
function staticImports(file: string): { files: Set<string>; packages: Set<string> } {
  const files = new Set<string>();
  const packages = new Set<string>();
  const visit = (at: string): void => {
    if (files.has(at)) return;
    files.add(at);
    const source = readFileSync(at, 'utf8');
    for (const match of source.matchAll(/^\s*(?:import|export)\s[^;]*?\sfrom\s+'([^']+)'/gms)) {
      const target = match[1]!;
      if (target.startsWith('.')) visit(path.resolve(path.dirname(at), target));
      else packages.add(target);
    }
  };
  visit(file);
  return { files, packages };
}

describe('modules of an engine thread', () => {
  it('the trial worker statically imports no @tensorflow package and not zod', () => {
    const { files, packages } = staticImports(path.join(DIST, 'threads/trial-thread.js'));
    expect(files.size).toBeGreaterThan(10);
    expect(files.has(path.join(DIST, 'src/trainers/engine/segment.js'))).toBe(true);
    expect([...packages].filter((name) => name.startsWith('@tensorflow/') || name === 'zod')).toEqual([]);
  });

  it('the tfjs path and the study schema do import them (so the check above can fail)', () => {
    expect([...staticImports(path.join(DIST, 'src/trainers/tfjs/loop.js')).packages].some((name) => name.startsWith('@tensorflow/'))).toBe(true);
    expect(staticImports(path.join(DIST, 'src/study/definition.js')).packages.has('zod')).toBe(true);
  });
});
