/**
 * The report's front chart (a study with a second goal) in a real browser, like the other charts:
 * drawn, with the front's places, the winner's band over folds, nothing requested, nothing cut off.
 */
import { rm } from 'node:fs/promises';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { plot } from '../src/commands/plot.js';
import { runStudy } from '../src/runner/run-study.js';
import { frontChart } from '../src/plot/specs.js';
import { CHROMIUM, browserRunsHere as runsHere, launchChromium, openPage, overflowOf } from './helpers/browser.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';
import type { StudyDocument } from '../src/store/types.js';

describe.runIf(runsHere)('the front chart in headless Chromium', () => {
  let root: string;
  let doc: StudyDocument;
  let reportUrl: string;
  let browser: Browser;

  beforeAll(async () => {
    const file = await writeTinyStudy(
      tinyStudy({
        data: { csv: 'tiny.csv', target: 'fails_within_week', task: 'binary', splitSeed: 1, folds: 3 },
        space: { depth: { min: 1, max: 2 }, width: { min: 2, max: 32 }, activation: ['relu', 'tanh'], learningRate: { min: 0.01, max: 0.1 }, batchSize: [16], optimizer: ['adam'] },
        budget: { trials: 10, maxEpochs: 3 },
        footprint: { against: 'weights' },
      }),
    );
    root = path.dirname(file);
    const dir = path.join(root, 'run');
    doc = (await runStudy(file, { out: dir })).doc;
    const { files } = await plot({ dir });
    reportUrl = pathToFileURL(files.find((f) => f.endsWith('report.html'))!).href;
    browser = await launchChromium();
  }, 180_000);

  afterAll(async () => {
    await browser?.close();
    if (root) await rm(root, { recursive: true, force: true });
  });

  it('is left out of a study without a second goal', () => {
    expect(frontChart({ ...doc, definition: { ...doc.definition, footprint: undefined } } as StudyDocument)).toBeNull();
    expect(frontChart(doc)).not.toBeNull();
  });

  it('opens offline with no console errors, draws the front by place and the winner\'s band, and cuts nothing off', async () => {
    const { page, errors, requests } = await openPage(browser, reportUrl, 1000);
    expect(errors).toEqual([]);
    expect(requests).toEqual([reportUrl]);
    expect(await page.textContent('body')).toContain('What does a smaller or faster network cost in score?');
    const marks = await page.$$eval('section#chart-front svg g.role-mark > path, section#chart-front svg g.role-mark > rect, section#chart-front svg g.role-mark > text', (found) => found.length);
    expect(marks).toBeGreaterThan(0);
    const titles = await page.$$eval('section#chart-front svg title', (found) => found.map((t) => t.textContent ?? ''));
    expect(titles.some((t) => /place 1 on the front/.test(t))).toBe(true);
    // The band of one standard error over the 3 folds, from the study itself.
    expect(titles.some((t) => /one standard error over 3 folds/.test(t))).toBe(true);
    const overflow = await overflowOf(page, 'section#chart-front figure svg');
    expect(overflow.page).toBeLessThanOrEqual(0);
    expect(overflow.boxes).toEqual([]);
    await page.close();
  });
});

if (!runsHere) {
  it.skip(`the front chart in headless Chromium: skipped because ${CHROMIUM} is absent and CI is not set`, () => {});
}
