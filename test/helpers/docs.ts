/** The user's documentation in reading order: the README, then the pages of docs/ in the order the README lists them. */
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');

/** `README.md` and each `docs/*.md` page the README links, in the README's order. */
export function documentationFiles(): string[] {
  const readme = readFileSync(path.join(ROOT, 'README.md'), 'utf8');
  const linked = [...readme.matchAll(/\]\((docs\/[a-z-]+\.md)\)/g)].map((match) => match[1]!);
  return ['README.md', ...new Set(linked)];
}

/** Pages in docs/ that the README does not link (there should be none). */
export function unlinkedPages(): string[] {
  const linked = new Set(documentationFiles());
  return readdirSync(path.join(ROOT, 'docs'))
    .filter((name) => name.endsWith('.md'))
    .map((name) => `docs/${name}`)
    .filter((page) => !linked.has(page));
}

/** The text of the whole documentation, README first. */
export function documentation(): string {
  return documentationFiles()
    .map((file) => readFileSync(path.join(ROOT, file), 'utf8'))
    .join('\n');
}
