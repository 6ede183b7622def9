import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { StudyStore } from '../src/store/study-store.js';
import { FAULT_VARIABLE } from '../src/runner/faults.js';
import { spawnCliProcess, type CliProcess } from '../scripts/cli-process.js';
import { BIN, runCli } from './helpers/cli.js';
import { longTinyStudy, writeTinyStudy } from './helpers/studies.js';

/** A `rungwise` process; progress goes to stderr, results to stdout. */
function start(args: string[], env: NodeJS.ProcessEnv = {}): CliProcess {
  return spawnCliProcess(BIN, args, { env, label: args[0] });
}

const longStudy = () => longTinyStudy(40, 1);

describe('stopping a running study', () => {
  it('on SIGINT stops starting trials, saves, says how to resume and exits non-zero', async () => {
    const file = await writeTinyStudy(longStudy());
    const dir = path.join(path.dirname(file), 'run');
    const run = start(['run', file, '--out', dir]);
    await run.printed(/\[\d+\/\d+ jobs, \d+\/\d+ epochs\] trial/);
    run.child.kill('SIGINT');
    expect((await run.exited).code).toBe(130);
    expect(run.streams().stderr).toContain(`continue it with: rungwise resume ${dir}`);
    expect(run.streams().stdout).toMatch(/study tiny interrupted: /);
    const doc = (await StudyStore.open(dir)).doc;
    expect(doc.state).toBe('interrupted');
    expect(doc.trials.filter((t) => t.status === 'trained').length).toBeGreaterThanOrEqual(1);
    expect(doc.trials.length).toBeLessThan(40);
  });

  it('on a second SIGINT stops at once, and the study file still opens', async () => {
    const file = await writeTinyStudy(longStudy());
    const dir = path.join(path.dirname(file), 'run');
    const run = start(['run', file, '--out', dir]);
    await run.printed(/\[\d+\/\d+ jobs, \d+\/\d+ epochs\] trial/);
    run.child.kill('SIGINT');
    run.child.kill('SIGINT');
    expect((await run.exited).code).toBe(130);
    const doc = (await StudyStore.open(dir)).doc;
    expect(doc.trials.some((t) => t.status === 'trained')).toBe(true);
  });

  it('refuses a second run or resume on the same directory, naming the process that holds it', async () => {
    const file = await writeTinyStudy(longStudy());
    const dir = path.join(path.dirname(file), 'run');
    // Trial 1 never returns, so the first run holds the directory until it is killed.
    const first = start(['run', file, '--out', dir], { [FAULT_VARIABLE]: '1:hang' });
    await first.printed(/\[\d+\/\d+ jobs, \d+\/\d+ epochs\] trial/);
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
