/** The import graph of `src/`, read with the TypeScript compiler's own pre-processor (type-only and dynamic imports count). */
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import ts from 'typescript';

export interface ImportGraph {
  /** Files relative to the root, e.g. `core/ranking.ts`. */
  files: string[];
  /** file -> files it imports (relative imports only). */
  edges: Map<string, Set<string>>;
}

function sourceFiles(dir: string, root: string): string[] {
  return readdirSync(dir, { withFileTypes: true }).flatMap((entry) => {
    const full = path.join(dir, entry.name);
    if (entry.isDirectory()) return sourceFiles(full, root);
    return entry.name.endsWith('.ts') ? [path.relative(root, full).split(path.sep).join('/')] : [];
  });
}

/** Reads every `.ts` file under `root` and resolves its relative imports to files under `root`. */
export function importGraph(root: string): ImportGraph {
  const files = sourceFiles(root, root).sort();
  const known = new Set(files);
  const edges = new Map<string, Set<string>>();
  for (const file of files) {
    const info = ts.preProcessFile(readFileSync(path.join(root, file), 'utf8'), true, true);
    const targets = new Set<string>();
    for (const { fileName } of info.importedFiles) {
      if (!fileName.startsWith('.')) continue;
      const resolved = path.posix.normalize(path.posix.join(path.posix.dirname(file), fileName)).replace(/\.js$/, '.ts');
      const target = [resolved, `${resolved}.ts`, `${resolved}/index.ts`].find((candidate) => known.has(candidate));
      if (target) targets.add(target);
    }
    edges.set(file, targets);
  }
  return { files, edges };
}

/** The top folder of a file under `src/` (`core/ranking.ts` -> `core`); a file at the top is its own name. */
export function topFolder(file: string): string {
  return file.includes('/') ? file.slice(0, file.indexOf('/')) : file;
}

/** Strongly connected components with more than one member (or a self-loop): the cycles of a directed graph. */
export function cycles(nodes: readonly string[], next: (node: string) => Iterable<string>): string[][] {
  const index = new Map<string, number>();
  const low = new Map<string, number>();
  const stack: string[] = [];
  const onStack = new Set<string>();
  const found: string[][] = [];
  let counter = 0;
  const visit = (node: string): void => {
    index.set(node, counter);
    low.set(node, counter++);
    stack.push(node);
    onStack.add(node);
    for (const to of next(node)) {
      if (!index.has(to)) {
        visit(to);
        low.set(node, Math.min(low.get(node)!, low.get(to)!));
      } else if (onStack.has(to)) low.set(node, Math.min(low.get(node)!, index.get(to)!));
    }
    if (low.get(node) === index.get(node)) {
      const component: string[] = [];
      let member: string;
      do {
        member = stack.pop()!;
        onStack.delete(member);
        component.push(member);
      } while (member !== node);
      if (component.length > 1 || [...next(node)].includes(node)) found.push(component.sort());
    }
  };
  for (const node of nodes) if (!index.has(node)) visit(node);
  return found;
}
