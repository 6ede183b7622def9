import { copyFile, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { plot } from '../src/commands/plot.js';
import { OPTIMISM_CAUTION as CAUTION } from '../src/report/caution.js';
import { UserError } from '../src/errors.js';

const fixturePath = (name: string) => new URL(`./fixtures/studies/${name}.json`, import.meta.url);

let dir: string;
beforeEach(async () => {
  dir = await mkdtemp(path.join(tmpdir(), 'rungwise-plot-'));
});
afterEach(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('rungwise plot', () => {
  it('writes one SVG and one spec per chart and report.html to <dir>/plots by default', async () => {
    await copyFile(fixturePath('halving-nine'), path.join(dir, 'study.json'));
    const { files } = await plot({ dir });
    const names = ['progress', 'learning-curves', 'parameters', 'parallel', 'rungs'];
    expect(files).toEqual([...names.flatMap((n) => [`${n}.svg`, `${n}.vl.json`]), 'report.html'].map((f) => path.join(dir, 'plots', f)));
    expect((await readdir(path.join(dir, 'plots'))).sort()).toEqual(files.map((f) => path.basename(f)).sort());
    // The staging folder is gone: the run directory holds only the study file and the plots.
    expect((await readdir(dir)).sort()).toEqual(['plots', 'study.json']);
  });

  it('writes to the folder given as out', async () => {
    await copyFile(fixturePath('random-five'), path.join(dir, 'study.json'));
    const out = path.join(dir, 'elsewhere', 'charts');
    const { files } = await plot({ dir, out });
    expect(files.every((f) => path.dirname(f) === out)).toBe(true);
    expect(files.map((f) => path.basename(f))).not.toContain('rungs.svg');
  });

  it('builds a self-contained report with the summary, the caution and every chart inlined', async () => {
    await copyFile(fixturePath('random-five'), path.join(dir, 'study.json'));
    await plot({ dir });
    const html = await readFile(path.join(dir, 'plots', 'report.html'), 'utf8');
    expect(html).toContain(CAUTION);
    expect(CAUTION).toBe(
      'Caution: the validation score of a configuration picked from many is optimistic; judge the chosen model on the held-out test split (rungwise export --retrain), and have any model whose predictions affect people reviewed before use.',
    );
    expect(html).toContain('<th scope="row">study</th><td>random-five</td>');
    expect(html).toContain('<th scope="row">sampler</th><td>random (seed 0)</td>');
    expect(html).toContain('<th scope="row">objective</th><td>validation AUC, higher is better</td>');
    expect(html).toContain('<th scope="row">trials by status</th><td>completed 4, diverged 1</td>');
    expect(html).toContain('<th scope="row">best trial</th><td>trial 5: 0.86 after 3 epochs</td>');
    expect(html).toContain('2 hidden layers of 32 units, tanh activation, adam with learning rate 0.003, batch size 32, L2 penalty 0.01, dropout 0.3');
    expect(html.match(/<svg\b/g)).toHaveLength(4);
    // Nothing to fetch: no scripts, no external sources or links, no web fonts.
    expect(html).not.toMatch(/<script|<link|@import|@font-face/i);
    expect(html).not.toMatch(/(src|href)\s*=\s*["']?https?:|url\(\s*["']?https?:/i);
  });

  it('names as best the trial trained for the most epochs, then the best objective, under a halving sampler', async () => {
    await copyFile(fixturePath('halving-nine'), path.join(dir, 'study.json'));
    await plot({ dir });
    const html = await readFile(path.join(dir, 'plots', 'report.html'), 'utf8');
    expect(html).toContain('<th scope="row">best trial</th><td>trial 5: 0.22 after 9 epochs</td>');
    expect(html).toContain('successive-halving (eta 3, first rung 1 epoch, seed 0)');
  });

  it('fails with E_STUDY_FILE naming the path when the run directory has no study file', async () => {
    const error = await plot({ dir }).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(UserError);
    expect(error).toMatchObject({ code: 'E_STUDY_FILE' });
    expect((error as UserError).message).toContain(path.join(dir, 'study.json'));
    expect((error as UserError).message).toContain('no study file here; run `rungwise run');
    expect(await readdir(dir)).toEqual([]);
  });

  it('fails with E_STUDY_CORRUPT when the study file is not JSON or not a study, writing nothing', async () => {
    await writeFile(path.join(dir, 'study.json'), '{"format": "rungwise-st');
    await expect(plot({ dir })).rejects.toMatchObject({ code: 'E_STUDY_CORRUPT', message: expect.stringContaining('not valid JSON') });
    await writeFile(path.join(dir, 'study.json'), '{"format": "something-else", "trials": []}');
    await expect(plot({ dir })).rejects.toMatchObject({ code: 'E_STUDY_CORRUPT', message: expect.stringContaining('not a rungwise study file') });
    expect(await readdir(dir)).toEqual(['study.json']);
  });

  it('leaves no staging folder behind when the output cannot be written', async () => {
    await copyFile(fixturePath('halving-nine'), path.join(dir, 'study.json'));
    // A file already sits where the output folder should go, so moving the charts in fails.
    await writeFile(path.join(dir, 'plots'), 'not a folder');
    await expect(plot({ dir })).rejects.toThrow();
    expect((await readdir(dir)).sort()).toEqual(['plots', 'study.json']);
    expect(await readFile(path.join(dir, 'plots'), 'utf8')).toBe('not a folder');
  });

  it('writes a report that says there is nothing to plot when no trial has a score', async () => {
    const study = JSON.parse(await readFile(fixturePath('random-five'), 'utf8')) as { trials: unknown[] };
    await writeFile(path.join(dir, 'study.json'), JSON.stringify({ ...study, trials: [] }));
    const { files } = await plot({ dir });
    expect(files.map((f) => path.basename(f))).toEqual(['report.html']);
    const html = await readFile(files[0]!, 'utf8');
    expect(html).toContain('No trial has a score yet, so there is nothing to plot.');
    expect(html).toContain('<th scope="row">trials by status</th><td>none yet</td>');
  });
});
