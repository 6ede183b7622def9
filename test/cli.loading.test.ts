import { spawn } from 'node:child_process';
import { existsSync, createWriteStream } from 'node:fs';
import { once } from 'node:events';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { BIN } from './helpers/cli.js';
import { tinyStudy } from './helpers/studies.js';

/** Loading a large CSV from the CLI: progress on stderr, and Ctrl-C honoured while it reads. */
let folder: string;
let definition: string;

beforeAll(async () => {
  folder = await mkdtemp(path.join(tmpdir(), 'rungwise-loading-'));
  // About 20 MB: above the 16 MiB from which a non-terminal gets progress lines.
  const out = createWriteStream(path.join(folder, 'large.csv'));
  out.write(`${Array.from({ length: 20 }, (_, c) => `x${c}`).join(',')},label\n`);
  for (let row = 0; row < 200_000; row++) {
    const cells = Array.from({ length: 20 }, (_, c) => ((row * 31 + c * 17) % 1000) / 100);
    if (!out.write(`${cells.join(',')},${row % 2 ? 'yes' : 'no'}\n`)) await once(out, 'drain');
  }
  out.end();
  await once(out, 'finish');
  definition = path.join(folder, 'study.json');
  await writeFile(definition, JSON.stringify(tinyStudy({ data: { csv: 'large.csv', target: 'label', task: 'binary' }, budget: { trials: 1, maxEpochs: 1 }, threads: 1 })));
});
afterAll(async () => {
  await rm(folder, { recursive: true, force: true });
});

describe('loading a large CSV from the CLI', () => {
  it('shows reading progress on stderr, and a Ctrl-C while reading stops at once with nothing written (exit 130)', async () => {
    const out = path.join(folder, 'run');
    const child = spawn(process.execPath, [BIN, 'run', definition, '--out', out], { stdio: ['ignore', 'pipe', 'pipe'] });
    let stderr = '';
    let stdout = '';
    let interrupted = false;
    child.stdout.on('data', (chunk: Buffer) => (stdout += chunk.toString()));
    child.stderr.on('data', (chunk: Buffer) => {
      stderr += chunk.toString();
      if (!interrupted && /reading .*large\.csv: \d+%/.test(stderr)) {
        interrupted = true;
        child.kill('SIGINT');
      }
    });
    const [code] = (await once(child, 'close')) as [number | null];
    expect(stderr).toMatch(/^reading .*large\.csv: 25% \(\d+\.\d of \d+\.\d MB\)$/m);
    expect(stderr).toContain('interrupted before the first trial; nothing was written');
    expect(code).toBe(130);
    expect(stdout).toBe('');
    expect(existsSync(out)).toBe(false);
  });
});
