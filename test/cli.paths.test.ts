import { existsSync } from 'node:fs';
import { mkdir, rm } from 'node:fs/promises';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli } from './helpers/cli.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

/** Paths that are not what a command expects: one error line, exit 2, nothing written. */
let definition: string;
let runDir: string;

beforeAll(async () => {
  definition = await writeTinyStudy(tinyStudy({ budget: { trials: 1, maxEpochs: 1 }, threads: 1 }));
  runDir = path.join(path.dirname(definition), 'run');
  const result = await runCli(['run', definition, '--out', runDir]);
  expect(result.code, result.stderr).toBe(0);
});
afterAll(async () => {
  await rm(path.dirname(definition), { recursive: true, force: true });
});

describe('a file given where a run directory belongs', () => {
  it.each([['ranking'], ['plot'], ['export']])('%s <a file> names the file and what to give instead', async (command) => {
    const result = await runCli([command, definition]);
    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    expect(result.stderr).toBe(`error: ${definition}: is a file, not a run directory; name the folder that holds study.json\n`);
  });
});

describe('a lock without an owner file', () => {
  it('resume says at once which lock file blocks the study and how to clear it', async () => {
    const lock = path.join(runDir, 'study.lock');
    await mkdir(lock);
    try {
      const result = await runCli(['resume', runDir]);
      expect(result.code).toBe(2);
      expect(result.stderr.trimEnd().split('\n')).toEqual([
        `error: ${runDir}: the study is locked (study.lock) but no process is named as its owner (study.owner.json is missing): another rungwise may be starting on it, or one stopped while taking the lock; if none is running, delete ${lock} and try again`,
      ]);
      expect(existsSync(path.join(runDir, 'study.owner.json'))).toBe(false);
    } finally {
      await rm(lock, { recursive: true, force: true });
    }
  });
});
