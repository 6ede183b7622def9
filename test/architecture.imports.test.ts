/**
 * The structure the contributor guide promises, checked on the source: folders in layers with the
 * imports the guide's folder map allows, no import cycle, seams whose message types stay inside
 * their transport, and sampler kinds named only inside `samplers/`.
 */
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import ts from 'typescript';
import { describe, expect, it } from 'vitest';
import { SAMPLER_PLUGINS } from '../src/samplers/registry.js';
import { cycles, importGraph, topFolder } from './helpers/import-graph.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const SRC = path.join(ROOT, 'src');
const graph = importGraph(SRC);

/** The folder map of DEVELOPERS.md: folder (as `core`, or `index.ts`) -> folders it may import. */
function folderMap(): Map<string, Set<string>> {
  const guide = readFileSync(path.join(ROOT, 'DEVELOPERS.md'), 'utf8');
  const section = guide.slice(guide.indexOf('## Folder map'), guide.indexOf('\nOutside `src/`'));
  const map = new Map<string, Set<string>>();
  for (const row of section.split('\n').filter((line) => line.startsWith('| `src/'))) {
    const cells = row.split('|').map((cell) => cell.trim());
    const folder = cells[1]!.replace(/`/g, '').replace(/^src\//, '').replace(/\/$/, '');
    const allowed = cells[3]!;
    const everything = allowed.startsWith('every folder but ');
    const names = everything ? [] : allowed === '—' ? [] : allowed.split(',').map((name) => name.trim());
    map.set(folder, new Set(everything ? ['*', `-${allowed.slice('every folder but '.length)}`] : names));
  }
  return map;
}

const map = folderMap();
const mayImport = (from: string, to: string): boolean => {
  const allowed = map.get(from);
  if (!allowed) return false;
  if (allowed.has('*')) return !allowed.has(`-${to}`);
  return allowed.has(to);
};

describe('the folders of src/', () => {
  it('are the folders the contributor guide lists, each once', () => {
    const present = readdirSync(SRC, { withFileTypes: true }).map((entry) => (entry.isDirectory() ? entry.name : entry.name)).sort();
    expect([...map.keys()].sort()).toEqual(present);
  });

  it('import only the folders their row of the guide allows', () => {
    const forbidden: string[] = [];
    for (const [file, targets] of graph.edges) {
      for (const target of targets) {
        const from = topFolder(file);
        const to = topFolder(target);
        if (from !== to && !mayImport(from, to)) forbidden.push(`${file} -> ${target}`);
      }
    }
    expect(forbidden).toEqual([]);
  });

  it('form layers: the allowed imports themselves have no cycle', () => {
    const folders = [...map.keys()];
    expect(cycles(folders, (from) => folders.filter((to) => to !== from && mayImport(from, to)))).toEqual([]);
  });
});

describe('the import graph of src/', () => {
  it('has no cycle between files', () => {
    expect(cycles(graph.files, (file) => graph.edges.get(file) ?? [])).toEqual([]);
  });

  it('has no cycle between folders', () => {
    const folders = [...new Set(graph.files.map(topFolder))];
    const next = (folder: string): string[] => [
      ...new Set(
        [...graph.edges]
          .filter(([file]) => topFolder(file) === folder)
          .flatMap(([, targets]) => [...targets].map(topFolder))
          .filter((to) => to !== folder),
      ),
    ];
    expect(cycles(folders, next)).toEqual([]);
  });

  it("keeps each transport's message types inside that transport", () => {
    const messageFiles = ['transports/threads/messages.ts', 'transports/redis/protocol.ts'];
    const outside = [...graph.edges].flatMap(([file, targets]) =>
      messageFiles.filter((message) => targets.has(message) && !file.startsWith(path.posix.dirname(message) + '/')).map((message) => `${file} -> ${message}`),
    );
    expect(outside).toEqual([]);
  });
});

/** String literals a file compares with (===, !==, case) or lists, that name a sampler kind. */
function samplerKindsBranchedOn(file: string, text: string, kinds: ReadonlySet<string>): string[] {
  const source = ts.createSourceFile(file, text, ts.ScriptTarget.Latest, true);
  const found: string[] = [];
  const visit = (node: ts.Node): void => {
    if (ts.isStringLiteral(node) && kinds.has(node.text)) {
      const parent = node.parent;
      const compared =
        (ts.isBinaryExpression(parent) && [ts.SyntaxKind.EqualsEqualsEqualsToken, ts.SyntaxKind.ExclamationEqualsEqualsToken].includes(parent.operatorToken.kind)) ||
        ts.isCaseClause(parent) ||
        ts.isArrayLiteralExpression(parent);
      if (compared) found.push(`${file}:${source.getLineAndCharacterOfPosition(node.getStart()).line + 1} '${node.text}'`);
    }
    ts.forEachChild(node, visit);
  };
  visit(source);
  return found;
}

describe('sampler kinds', () => {
  it('are branched on only inside samplers/: every other module asks the plug-in for its plan and traits', () => {
    const kinds = new Set(SAMPLER_PLUGINS.map((plugin) => plugin.kind));
    expect(kinds.size).toBe(7);
    const outside = graph.files.filter((file) => topFolder(file) !== 'samplers').flatMap((file) => samplerKindsBranchedOn(file, readFileSync(path.join(SRC, file), 'utf8'), kinds));
    expect(outside).toEqual([]);
  });

  it('the check above finds a comparison, a case and a list of kinds (it fails on the code it replaced)', () => {
    const kinds = new Set(['hyperband', 'tpe']);
    const probe = "if (s.kind === 'hyperband') a();\nswitch (k) { case 'tpe': b(); }\nconst HALVING = new Set(['hyperband']);\nconst fallback = { kind: 'tpe' };";
    expect(samplerKindsBranchedOn('probe.ts', probe, kinds)).toEqual(["probe.ts:1 'hyperband'", "probe.ts:2 'tpe'", "probe.ts:3 'hyperband'"]);
  });
});
