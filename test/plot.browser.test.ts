import { existsSync } from 'node:fs';
import { copyFile, mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { compare } from '../src/commands/compare.js';
import { plot } from '../src/commands/plot.js';
import { CHROMIUM, browserRunsHere as runsHere, launchChromium, openPage, overflowOf } from './helpers/browser.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const FIXTURE = path.join(ROOT, 'test/fixtures/studies/hyperband-generated.json');
const OTHER_FIXTURE = path.join(ROOT, 'test/fixtures/studies/random-five.json');
const SCREENSHOTS = path.join(ROOT, 'test-output');

describe.runIf(runsHere)('report.html in headless Chromium', () => {
  let dir: string;
  let browser: Browser;
  let reportUrl: string;
  let comparisonUrl: string;

  beforeAll(async () => {
    dir = await mkdtemp(path.join(tmpdir(), 'rungwise-plot-browser-'));
    // The fixture predates per-class figures: its scored trials get one confusion matrix, so the per-class section is drawn too.
    const study = JSON.parse(await readFile(FIXTURE, 'utf8')) as { trials: { objective: number | null; epochsTrained: number; classFigures?: unknown }[] };
    for (const trial of study.trials) {
      if (trial.objective !== null) trial.classFigures = { epoch: trial.epochsTrained, confusion: [[410, 31], [62, 97]], averagePrecision: [0.93, 0.71], threshold: 0.5 };
    }
    await writeFile(path.join(dir, 'study.json'), JSON.stringify(study));
    const { files } = await plot({ dir });
    reportUrl = pathToFileURL(files.find((f) => f.endsWith('report.html'))!).href;
    await mkdir(path.join(dir, 'other'));
    await copyFile(OTHER_FIXTURE, path.join(dir, 'other', 'study.json'));
    const compared = await compare({ dirs: [dir, path.join(dir, 'other')] });
    comparisonUrl = pathToFileURL(compared.files.find((f) => f.endsWith('report.html'))!).href;
    browser = await launchChromium();
  });

  afterAll(async () => {
    await browser?.close();
    if (dir) await rm(dir, { recursive: true, force: true });
  });

  const pages = [
    {
      page: 'report',
      url: () => reportUrl,
      charts: ['chart-budget', 'chart-rung-agreement', 'chart-hyperparameters', 'chart-learning-curves'],
      table: 'table.top',
    },
    {
      page: 'comparison',
      url: () => comparisonUrl,
      charts: ['chart-budget', 'chart-rung-budget', 'chart-rung-agreement-1', 'chart-learning-curves-1', 'chart-learning-curves-2'],
      table: 'table.side-by-side',
    },
  ];
  for (const { page: pageName, url, charts, table } of pages)
  for (const width of [1400, 800]) {
    it(`${pageName}: opens offline at ${width} px with no console errors, requests nothing but itself, draws marks in every chart and cuts nothing off`, async () => {
      const { page, errors, requests } = await openPage(browser, url(), width);

      expect(errors).toEqual([]);
      expect(requests).toEqual([url()]);
      const marksPerChart = await page.$$eval('section.chart', (sections) =>
        sections.map((section) => ({
          id: section.id,
          marks: section.querySelectorAll('svg g.role-mark > path, svg g.role-mark > line, svg g.role-mark > text, svg g.role-mark > rect').length,
        })),
      );
      expect(marksPerChart.map((c) => c.id)).toEqual(charts);
      for (const chart of marksPerChart) expect(chart.marks, chart.id).toBeGreaterThan(0);
      expect(await page.textContent('body')).toContain('judge the chosen model on the held-out test split');
      // The winner's star is in the table and in every chart that shows trials.
      if (pageName === 'report') expect(await page.textContent('table.top tr.winner')).toContain('★');
      if (pageName === 'report') expect(await page.textContent('table.confusion')).toContain('410 (93%)');
      // Hovering a point shows its figures: the browser's own tooltip from an SVG title (the page runs no script).
      const hoverTitles = await page.$$eval('figure svg title', (titles) => titles.map((t) => t.textContent ?? ''));
      expect(hoverTitles.some((t) => /#1 trial 48/.test(t))).toBe(true);
      expect(await page.$(table)).not.toBeNull();

      // Nothing is cut off: the page does not scroll sideways and every chart and table fits the window.
      const overflow = await overflowOf(page, 'figure svg, table');
      expect(overflow.page).toBeLessThanOrEqual(0);
      expect(overflow.boxes).toEqual([]);

      await mkdir(SCREENSHOTS, { recursive: true });
      const screenshot = path.join(SCREENSHOTS, `${pageName}-${width}.png`);
      await page.screenshot({ path: screenshot, fullPage: true });
      expect(existsSync(screenshot)).toBe(true);
    });
  }
});

if (!runsHere) {
  it.skip(`report.html in headless Chromium: skipped because ${CHROMIUM} is absent and CI is not set (install the Debian package chromium to run it)`, () => {});
}
