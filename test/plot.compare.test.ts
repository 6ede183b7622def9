import { copyFile, mkdir, mkdtemp, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { compare } from '../src/commands/compare.js';
import { UserError } from '../src/core/errors.js';

const fixturePath = (name: string) => new URL(`./fixtures/studies/${name}.json`, import.meta.url);

let root: string;
async function runDir(name: string, fixture: string): Promise<string> {
  const dir = path.join(root, name);
  await mkdir(dir);
  await copyFile(fixturePath(fixture), path.join(dir, 'study.json'));
  return dir;
}

beforeEach(async () => {
  root = await mkdtemp(path.join(tmpdir(), 'rungwise-compare-'));
});
afterEach(async () => {
  await rm(root, { recursive: true, force: true });
});

describe('rungwise compare', () => {
  it('answers the questions side by side in a table and writes a comparison report', async () => {
    const a = await runDir('a', 'hyperband-generated');
    const b = await runDir('b', 'random-five');
    const { table, details, studies, files } = await compare({ dirs: [a, b] });
    const lines = table.split('\n');
    expect(lines[0]).toMatch(/^\s+hyperband-generated\s+random-five$/);
    // Narrow: one row per answer, one column per study, a few words each; it fits an 80-column terminal.
    expect(lines).toHaveLength(2 + 9);
    for (const line of lines) expect(line.length, line).toBeLessThanOrEqual(80);
    expect(table).toMatch(/winner \(auc\)\s+trial 48: 0\.9473\s+trial 5: 0\.86/);
    expect(table).toMatch(/compute spent\s+328 epochs \(92%\)/);
    expect(table).toMatch(/compute at rung 0\s+\d+%\s+no halving/);
    // The answers in full on request.
    expect(details).toContain('  hyperband-generated: trial 48: auc 0.9473 after 27 epochs\n  random-five: trial 5: auc 0.86 after 3 epochs');
    expect(details).toContain('328 epochs of 357 planned (92%)');
    expect(details).toContain('one rung (no halving)');
    expect(studies.map((s) => [s.name, s.winner?.trial, s.compute.epochs, s.compute.plannedEpochs])).toEqual([
      ['hyperband-generated', 48, 328, 357],
      ['random-five', 5, studies[1]!.compute.epochs, studies[1]!.compute.plannedEpochs],
    ]);
    expect(files.map((f) => path.basename(f))).toContain('report.html');
    expect(path.dirname(files[0]!)).toBe(path.join(a, 'comparison'));
    const html = await readFile(files.find((f) => f.endsWith('report.html'))!, 'utf8');
    expect(html).toContain('Comparison of hyperband-generated, random-five');
    expect(html).toContain('<h2>Was the budget well spent?</h2>');
    // One compute chart with both studies, and each study's own learning curves.
    expect(files.map((f) => path.basename(f))).toEqual(expect.arrayContaining(['budget.svg', 'learning-curves-1.svg', 'learning-curves-2.svg']));
  });

  it('tells two studies of the same name apart', async () => {
    const a = await runDir('a', 'random-five');
    const b = await runDir('b', 'random-five');
    const { table } = await compare({ dirs: [a, b], out: path.join(root, 'out') });
    expect(table.split('\n')[0]).toMatch(/random-five \(1\)\s+random-five \(2\)$/);
  });

  it('refuses studies ranked by different goals, naming the study file', async () => {
    const a = await runDir('a', 'random-five');
    const b = await runDir('b', 'halving-nine');
    const error = await compare({ dirs: [a, b] }).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(UserError);
    expect((error as UserError).message).toBe(
      `${path.join(b, 'study.json')}: ranked by logLoss (lower is better), but ${path.join(a, 'study.json')} by auc (higher is better); compare needs studies ranked by the same goal`,
    );
  });

  it('needs two run directories', async () => {
    await expect(compare({ dirs: [root] })).rejects.toMatchObject({ code: 'E_COMPARE_ARGS' });
  });
});
