import { existsSync } from 'node:fs';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { runCli } from './helpers/cli.js';
import { writeTinyStudy } from './helpers/studies.js';

let dir: string;
let csv: string;

beforeAll(async () => {
  const file = await writeTinyStudy();
  dir = path.join(path.dirname(file), 'run');
  csv = path.join(path.dirname(file), 'tiny.csv');
  const run = await runCli(['run', file, '--out', dir]);
  expect(run.code).toBe(0);
});

describe('rungwise export, predict and plot from the command line', () => {
  it('exports the best configuration with the caution, then predicts a CSV with it', async () => {
    const exported = await runCli(['export', dir]);
    expect(exported.code).toBe(0);
    expect(exported.stdout).toContain('exported rank 1');
    expect(exported.stdout).toContain('optimistic');
    const folder = path.join(dir, 'export', 'rank-1');
    for (const name of ['configuration.json', 'model.json', 'weights.bin']) expect(existsSync(path.join(folder, name))).toBe(true);

    const output = path.join(dir, 'predictions.csv');
    const predicted = await runCli(['predict', folder, csv, '--output', output]);
    expect(predicted.code).toBe(0);
    const lines = (await readFile(output, 'utf8')).trim().split('\n');
    expect(lines[0]).toBe('line,predicted,p_no,p_yes');
    expect(lines).toHaveLength(121);
  });

  it('exports with --retrain and reports test metrics beside the validation ones', async () => {
    const result = await runCli(['export', dir, '--retrain', '--out', path.join(dir, 'retrained')]);
    expect(result.code).toBe(0);
    expect(result.stdout).toMatch(/validation \(study\)\s+test \(study network\)\s+test \(retrained\)/);
  });

  it('plots the study into an offline report', async () => {
    const result = await runCli(['plot', dir]);
    expect(result.code).toBe(0);
    expect(result.stdout).toContain(`open ${path.join(dir, 'plots', 'report.html')}`);
    const html = await readFile(path.join(dir, 'plots', 'report.html'), 'utf8');
    expect(html).toContain('<svg');
  });

  it('predict with a missing model folder exits 2 with a one-line error', async () => {
    const result = await runCli(['predict', path.join(dir, 'nowhere'), csv]);
    expect(result.code).toBe(2);
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
  });
});
