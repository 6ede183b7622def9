/** Functions short enough to read in one sitting: none in src/ runs over 60 lines. */
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import ts from 'typescript';
import { describe, expect, it } from 'vitest';

const SRC = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../src');
const MAX_LINES = 60;

function sourceFiles(dir: string): string[] {
  return readdirSync(dir, { withFileTypes: true }).flatMap((entry) => {
    const full = path.join(dir, entry.name);
    return entry.isDirectory() ? sourceFiles(full) : entry.name.endsWith('.ts') ? [full] : [];
  });
}

/** Every function, method, arrow function and constructor whose body spans more than `max` lines. */
export function longFunctions(file: string, text: string, max: number): string[] {
  const source = ts.createSourceFile(file, text, ts.ScriptTarget.Latest, true);
  const found: string[] = [];
  const visit = (node: ts.Node): void => {
    if (ts.isFunctionLike(node) && 'body' in node && node.body) {
      const body = node.body as ts.Node;
      const first = source.getLineAndCharacterOfPosition(body.getStart()).line;
      const last = source.getLineAndCharacterOfPosition(body.getEnd()).line;
      const name = 'name' in node && node.name ? (node.name as ts.Node).getText(source) : '(anonymous)';
      if (last - first + 1 > max) found.push(`${path.relative(SRC, file)}:${first + 1} ${name} (${last - first + 1} lines)`);
    }
    ts.forEachChild(node, visit);
  };
  visit(source);
  return found;
}

describe('functions in src/', () => {
  it(`are at most ${MAX_LINES} lines long`, () => {
    expect(sourceFiles(SRC).flatMap((file) => longFunctions(file, readFileSync(file, 'utf8'), MAX_LINES))).toEqual([]);
  });

  it('the check counts a long function, an arrow function inside it, and a method', () => {
    const body = (n: number) => Array.from({ length: n }, (_, i) => `  const v${i} = ${i};`).join('\n');
    const text = `function outer() {\n${body(3)}\n  const inner = () => {\n${body(4)}\n  };\n}\nclass A {\n  m() {\n${body(5)}\n  }\n}\n`;
    expect(longFunctions(path.join(SRC, 'probe.ts'), text, 4)).toEqual(['probe.ts:1 outer (11 lines)', 'probe.ts:5 (anonymous) (6 lines)', 'probe.ts:13 m (7 lines)']);
  });
});
