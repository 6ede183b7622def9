import { readFileSync, writeFileSync } from 'node:fs';
import { copyFile, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { plot } from '../src/commands/plot.js';
import { OPTIMISM_CAUTION as CAUTION } from '../src/report/caution.js';
import { UserError } from '../src/core/errors.js';

const fixturePath = (name: string) => new URL(`./fixtures/studies/${name}.json`, import.meta.url);

let dir: string;
beforeEach(async () => {
  dir = await mkdtemp(path.join(tmpdir(), 'rungwise-plot-'));
});
afterEach(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('rungwise plot', () => {
  it('opens a version 1 study file and answers each question from it, leaving the file as it was', async () => {
    await copyFile(fixturePath('hyperband-generated'), path.join(dir, 'study.json'));
    const before = await readFile(path.join(dir, 'study.json'), 'utf8');
    expect(JSON.parse(before)).toMatchObject({ version: 1 });
    await plot({ dir });
    const html = await readFile(path.join(dir, 'plots', 'report.html'), 'utf8');
    for (const heading of ['Which configuration should I ship', 'Was the budget well spent?', 'Did the early rungs judge well?', 'Which hyperparameters matter', 'What did training look like?']) {
      expect(html).toContain(heading);
    }
    // Hyperband, 27 epochs, eta 3: brackets of 27/9/3/1, 12/4/1, 6/2 and 4 configurations plan 357 epochs (derived from Algorithm 1 of Li et al., JMLR 2018).
    expect(html).toContain('of 357 planned');
    expect(await readFile(path.join(dir, 'study.json'), 'utf8')).toBe(before);
  });

  it('draws the report again when the study file changes under --watch, never writing the study file', async () => {
    await copyFile(fixturePath('halving-nine'), path.join(dir, 'study.json'));
    const controller = new AbortController();
    const written: string[] = [];
    let changed = '';
    const watching = plot({
      dir,
      watch: true,
      pollMilliseconds: 20,
      signal: controller.signal,
      onWritten: (files) => {
        const html = readFileSync(files.find((f) => f.endsWith('report.html'))!, 'utf8');
        written.push(html);
        if (written.length === 1) {
          // The first report is out: a trial finishes elsewhere and the study file is rewritten.
          const study = JSON.parse(readFileSync(path.join(dir, 'study.json'), 'utf8')) as { name: string };
          changed = JSON.stringify({ ...study, name: 'halving-nine-later' });
          writeFileSync(path.join(dir, 'study.json'), changed);
        } else controller.abort();
      },
    });
    await watching;
    expect(written.length).toBeGreaterThanOrEqual(2);
    expect(written[0]).toContain('<meta http-equiv="refresh"');
    expect(written[0]).toContain('Study halving-nine</h1>');
    expect(written.at(-1)).toContain('Study halving-nine-later</h1>');
    expect(await readFile(path.join(dir, 'study.json'), 'utf8')).toBe(changed);
  });

  it('writes one SVG and one spec per chart and report.html to <dir>/plots by default', async () => {
    await copyFile(fixturePath('halving-nine'), path.join(dir, 'study.json'));
    const { files } = await plot({ dir });
    const names = ['budget', 'rung-agreement', 'hyperparameters', 'learning-curves'];
    expect(files).toEqual([...names.flatMap((n) => [`${n}.svg`, `${n}.vl.json`]), 'report.html'].map((f) => path.join(dir, 'plots', f)));
    expect((await readdir(path.join(dir, 'plots'))).sort()).toEqual(files.map((f) => path.basename(f)).sort());
    // The staging folder is gone: the run directory holds only the study file and the plots.
    expect((await readdir(dir)).sort()).toEqual(['plots', 'study.json']);
  });

  it('draws the baselines and band it is given into the leader and curve charts', async () => {
    await copyFile(fixturePath('halving-nine'), path.join(dir, 'study.json'));
    // Constructed references: the baselines themselves are computed elsewhere.
    const { files } = await plot({ dir, references: { baselines: [{ label: 'constant model', score: 0.69 }], band: { score: 0.22, standardError: 0.02, from: '3 repeat runs' } } });
    const svg = (name: string) => readFile(files.find((f) => f.endsWith(`${name}.svg`))!, 'utf8');
    for (const name of ['budget', 'learning-curves']) {
      expect(await svg(name)).toContain('constant model: 0.69');
      expect(await svg(name)).toContain('one standard error over 3 repeat runs');
    }
    expect(await svg('rung-agreement')).not.toContain('constant model');
  });

  it('writes to the folder given as out', async () => {
    await copyFile(fixturePath('random-five'), path.join(dir, 'study.json'));
    const out = path.join(dir, 'elsewhere', 'charts');
    const { files } = await plot({ dir, out });
    expect(files.every((f) => path.dirname(f) === out)).toBe(true);
    expect(files.map((f) => path.basename(f))).not.toContain('rung-budget.svg');
  });

  it('builds a self-contained report with the summary, the caution and every chart inlined', async () => {
    await copyFile(fixturePath('random-five'), path.join(dir, 'study.json'));
    await plot({ dir });
    const html = await readFile(path.join(dir, 'plots', 'report.html'), 'utf8');
    expect(html).toContain(CAUTION);
    expect(CAUTION).toBe(
      'Caution: the validation score of a configuration picked from many is optimistic; judge the chosen model on the held-out test split (rungwise export scores it there), and have any model whose predictions affect people reviewed before use.',
    );
    expect(html).toContain('<th scope="row">study</th><td>random-five</td>');
    expect(html).toContain('<th scope="row">sampler</th><td>random (seed 0)</td>');
    expect(html).toContain('<th scope="row">goal</th><td>validation AUC, higher is better</td>');
    expect(html).toContain('<th scope="row">trials by status</th><td>trained 4, diverged 1</td>');
    expect(html).toContain('<th scope="row">winner</th><td>trial 5: 0.86 after 3 epochs</td>');
    expect(html).toContain('2 hidden layers of 32 units, tanh activation, adam with learning rate 0.003, batch size 32, L2 penalty 0.01, dropout 0.3');
    // Five trials are too few for the importance charts; random search has no rungs.
    expect(html.match(/<svg\b/g)).toHaveLength(2);
    expect(html).toContain('<h2>Which configuration should I ship, and how sure is that?</h2>');
    expect(html).toContain('<h2>Was the budget well spent?</h2>');
    // Nothing to fetch: no scripts, no external sources or links, no web fonts.
    expect(html).not.toMatch(/<script|<link|@import|@font-face/i);
    expect(html).not.toMatch(/(src|href)\s*=\s*["']?https?:|url\(\s*["']?https?:/i);
  });

  it('names as best the trial trained for the most epochs, then the best score, under a halving sampler', async () => {
    await copyFile(fixturePath('halving-nine'), path.join(dir, 'study.json'));
    await plot({ dir });
    const html = await readFile(path.join(dir, 'plots', 'report.html'), 'utf8');
    expect(html).toContain('<th scope="row">winner</th><td>trial 5: 0.22 after 9 epochs</td>');
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
