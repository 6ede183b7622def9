import { spawn, type ChildProcessWithoutNullStreams } from 'node:child_process';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { StudyStore } from '../src/store/study-store.js';
import { FAULT_VARIABLE } from '../src/runner/faults.js';
import { BIN, runCli } from './helpers/cli.js';
import { longTinyStudy, writeTinyStudy } from './helpers/studies.js';

interface Started {
  child: ChildProcessWithoutNullStreams;
  output: () => { stdout: string; stderr: string };
  exited: Promise<number | null>;
  /** Resolves once stderr has shown a line matching `pattern`. */
  waitFor: (pattern: RegExp) => Promise<void>;
}

function start(args: string[], env: NodeJS.ProcessEnv = {}): Started {
  const child = spawn(process.execPath, [BIN, ...args], { stdio: ['pipe', 'pipe', 'pipe'], env: { ...process.env, ...env } });
  let stdout = '';
  let stderr = '';
  const waiters: { pattern: RegExp; resolve: () => void }[] = [];
  // Progress goes to stderr, results to stdout.
  child.stdout.on('data', (chunk: Buffer) => (stdout += chunk.toString()));
  child.stderr.on('data', (chunk: Buffer) => {
    stderr += chunk.toString();
    for (const w of waiters.filter((w) => w.pattern.test(stderr))) w.resolve();
  });
  const exited = new Promise<number | null>((resolve) => child.on('close', (code) => resolve(code)));
  return {
    child,
    output: () => ({ stdout, stderr }),
    exited,
    waitFor: (pattern) => (pattern.test(stderr) ? Promise.resolve() : new Promise((resolve) => waiters.push({ pattern, resolve }))),
  };
}

const longStudy = () => longTinyStudy(40, 1);

describe('stopping a running study', () => {
  it('on SIGINT stops starting trials, saves, says how to resume and exits non-zero', async () => {
    const file = await writeTinyStudy(longStudy());
    const dir = path.join(path.dirname(file), 'run');
    const run = start(['run', file, '--out', dir]);
    await run.waitFor(/\[\d+\/40 jobs, \d+\/\d+ epochs\] trial/);
    run.child.kill('SIGINT');
    expect(await run.exited).toBe(130);
    expect(run.output().stderr).toContain(`continue it with: rungwise resume ${dir}`);
    expect(run.output().stdout).toMatch(/study tiny interrupted: /);
    const doc = (await StudyStore.open(dir)).doc;
    expect(doc.state).toBe('interrupted');
    expect(doc.trials.filter((t) => t.status === 'trained').length).toBeGreaterThanOrEqual(1);
    expect(doc.trials.length).toBeLessThan(40);
  });

  it('on a second SIGINT stops at once, and the study file still opens', async () => {
    const file = await writeTinyStudy(longStudy());
    const dir = path.join(path.dirname(file), 'run');
    const run = start(['run', file, '--out', dir]);
    await run.waitFor(/\[\d+\/40 jobs, \d+\/\d+ epochs\] trial/);
    run.child.kill('SIGINT');
    run.child.kill('SIGINT');
    expect(await run.exited).toBe(130);
    const doc = (await StudyStore.open(dir)).doc;
    expect(doc.trials.some((t) => t.status === 'trained')).toBe(true);
  });

  it('refuses a second run or resume on the same directory, naming the process that holds it', async () => {
    const file = await writeTinyStudy(longStudy());
    const dir = path.join(path.dirname(file), 'run');
    // Trial 1 never returns, so the first run holds the directory until it is killed.
    const first = start(['run', file, '--out', dir], { [FAULT_VARIABLE]: '1:hang' });
    await first.waitFor(/\[\d+\/40 jobs, \d+\/\d+ epochs\] trial/);
    const second = await runCli(['resume', dir]);
    const third = await runCli(['run', file, '--out', dir, '--force']);
    first.child.kill('SIGKILL');
    await first.exited;
    expect(second.code).toBe(2);
    expect(second.stderr).toContain(`${dir}: the study is in use by process ${first.child.pid} on `);
    expect(third.code).toBe(2);
    expect(third.stderr).toContain(`the study is in use by process ${first.child.pid}`);
  });
});
