import { existsSync, readdirSync } from 'node:fs';
import { mkdtemp, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { validateStudy } from '../src/study/load.js';
import { runCli } from './helpers/cli.js';

/**
 * The bad-input corpus: one folder per case under test/corpus, each with a `study.json` (and its own
 * CSV when the case is about data) and an `expected.txt` listing substrings stderr must contain, one
 * per line. See test/corpus/README.md.
 */
const ROOT = fileURLToPath(new URL('..', import.meta.url));
const CORPUS = path.join(ROOT, 'test', 'corpus');
const FOLDERS = readdirSync(CORPUS, { withFileTypes: true })
  .filter((entry) => entry.isDirectory())
  .map((entry) => entry.name)
  .sort();
/** Bad input: a folder with `expected.txt`. */
const CASES = FOLDERS.filter((name) => existsSync(path.join(CORPUS, name, 'expected.txt')));
/** Valid but odd input: a folder with `reading.json`, the notes and the reading the run must give. */
const ODD_CASES = FOLDERS.filter((name) => existsSync(path.join(CORPUS, name, 'reading.json')));

interface ExpectedReading {
  /** Substrings of the `note:` lines on stderr, one per note expected. */
  notes: string[];
  /** Must match the recipe and the data summary saved in the study file. */
  recipe: Record<string, unknown>;
  summary: Record<string, unknown>;
}

// The brief's list of bad inputs has 36 kinds; the corpus must not silently shrink below it.
const MINIMUM_CASES = 36;

function escapeRegExp(text: string): string {
  return text.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
}

async function expectedSubstrings(name: string): Promise<string[]> {
  const text = await readFile(path.join(CORPUS, name, 'expected.txt'), 'utf8');
  return text.split('\n').filter((line) => line.trim() !== '');
}

let outRoot: string;

beforeAll(async () => {
  outRoot = await mkdtemp(path.join(tmpdir(), 'rungwise-bad-input-'));
});

afterAll(async () => {
  await rm(outRoot, { recursive: true, force: true });
});

describe('the bad-input corpus', () => {
  it(`holds at least ${MINIMUM_CASES} cases`, () => {
    expect(CASES.length).toBeGreaterThanOrEqual(MINIMUM_CASES);
  });

  it('gives every folder either an expected error or an expected reading', () => {
    expect([...CASES, ...ODD_CASES].sort()).toEqual(FOLDERS);
    expect(ODD_CASES.length).toBeGreaterThanOrEqual(8);
  });

  it('does not reject the valid tiny study (the corpus cases are bad for their own reasons)', async () => {
    const file = path.join(ROOT, 'studies', 'tiny', 'study.json');
    const definition = validateStudy(JSON.parse(await readFile(file, 'utf8')) as unknown, file);
    expect(definition.name).toBe('tiny');
    expect(definition.data.task).toBe('binary');
  });
});

describe('rungwise run on bad input: exit 2, one error line per violation, nothing on stdout, no run directory', () => {
  it.each(CASES)('%s', async (name) => {
    const expected = await expectedSubstrings(name);
    expect(expected.length).toBeGreaterThan(0);

    // Relative path from the repository root, so messages can name it as given or resolved.
    const definition = path.join('test', 'corpus', name, 'study.json');
    const out = path.join(outRoot, name);
    const result = await runCli(['run', definition, '--out', out], { cwd: ROOT });

    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    const lines = result.stderr.trimEnd().split('\n');

    // The first line names the definition file or a CSV file of this case, relative or absolute.
    const caseFolder = `(?:${escapeRegExp(path.join('test', 'corpus', name))}|${escapeRegExp(path.join(CORPUS, name))})`;
    const first = new RegExp(`^error: (${caseFolder}${escapeRegExp(path.sep)}[^:]+\\.(?:json|csv)): `).exec(lines[0]!);
    expect(first, `first line: ${lines[0]}`).not.toBeNull();
    const namedFile = first![1]!;

    // Every further line is another error, or another violation of the same file; never a stack frame.
    for (const line of lines) {
      expect(line).not.toMatch(/^\s+at /);
      expect(line.startsWith('error: ') || line.startsWith(`${namedFile}: `), `stray line: ${line}`).toBe(true);
    }
    for (const substring of expected) expect(result.stderr).toContain(substring);

    expect(existsSync(out)).toBe(false);
  });
});

describe('rungwise run on valid but odd input: exit 0, the reading stated in note lines and saved in the study file', () => {
  it.each(ODD_CASES)('%s', async (name) => {
    const expected = JSON.parse(await readFile(path.join(CORPUS, name, 'reading.json'), 'utf8')) as ExpectedReading;
    const definition = path.join('test', 'corpus', name, 'study.json');
    const out = path.join(outRoot, name);
    const result = await runCli(['run', definition, '--out', out], { cwd: ROOT });

    expect(result.code, result.stderr).toBe(0);
    // stderr also holds the progress display; the reading is told in `note:` lines, and nothing is an error.
    const lines = result.stderr.split('\n').filter((line) => line !== '');
    expect(lines.filter((line) => line.startsWith('error')), result.stderr).toEqual([]);
    const notes = lines.filter((line) => line.startsWith('note: '));
    for (const substring of expected.notes) expect(notes.some((line) => line.includes(substring)), `no note contains: ${substring}\n${result.stderr}`).toBe(true);
    if (expected.notes.length === 0) expect(notes).toEqual([]);

    const saved = JSON.parse(await readFile(path.join(out, 'study.json'), 'utf8')) as { recipe: unknown; data: unknown; trials: { status: string }[] };
    expect(saved.recipe).toMatchObject(expected.recipe);
    expect(saved.data).toMatchObject(expected.summary);
    expect(saved.trials.map((trial) => trial.status)).toEqual(['trained']);
  });
});
