import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { FAULT_VARIABLE } from '../src/runner/faults.js';
import { runCli } from './helpers/cli.js';
import { writeTinyStudy } from './helpers/studies.js';

describe('a study without a result', () => {
  it('exits 1 when every trial failed, with the first failure in one line', async () => {
    const file = await writeTinyStudy();
    const result = await runCli(['run', file, '--out', path.join(path.dirname(file), 'run')], { env: { [FAULT_VARIABLE]: '0:throw,1:throw,2:throw,3:throw' } });
    expect(result.code).toBe(1);
    const errors = result.stderr.split('\n').filter((line) => line.startsWith('error:'));
    expect(errors).toEqual([expect.stringMatching(/study\.json: all 4 trials ended without a score; the first: trial 0: injected fault: trial 0 throws$/)]);
  });

  it('exits 0 when some trials failed, and its last line says how many', async () => {
    const file = await writeTinyStudy();
    const result = await runCli(['run', file, '--out', path.join(path.dirname(file), 'run')], { env: { [FAULT_VARIABLE]: '2:throw' } });
    expect(result.code).toBe(0);
    // The result, summary last, is on stdout (progress is on stderr).
    const output = result.stdout.trimEnd().split('\n');
    expect(output.at(-1)).toBe('1 of 4 trials ended without a score (failed, diverged or timed out); the first: trial 2: injected fault: trial 2 throws');
  });
});
