/**
 * The report of a large study in a real browser: a synthetic successive-halving study file of
 * 10,000 configurations (rungs at 1, 3, 9 and 27 epochs, the top third going on), drawn by
 * `rungwise plot`; the size of `report.html` and the time headless Chromium takes from navigation
 * to the second animation frame after the load event (parsed, laid out and painted), median of 3.
 */
import { existsSync } from 'node:fs';
import { rm, stat } from 'node:fs/promises';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium } from 'playwright-core';
import { plot } from '../src/commands/plot.js';
import { stream } from '../src/random/streams.js';
import { StudyStore } from '../src/store/study-store.js';
import type { CurvePoint, JobRecord, TrialRecord } from '../src/core/trial.js';
import type { StudyDocument } from '../src/store/types.js';
import { studySchema } from '../src/study/definition.js';
import type { BenchOptions } from './index.js';
import { fmt, median, type GroupResult } from './report.js';
import { baseDocument } from './store.js';
import { tempDir } from './studies.js';

const CHROMIUM = '/usr/bin/chromium';
const RUNG_EPOCHS = [1, 3, 9, 27] as const;

/** A trial's AUC at an epoch: a plateau set by its learning rate and width, approached with epochs, plus noise. */
function curveOf(id: number, learningRate: number, width: number, epochs: number): CurvePoint[] {
  const rng = stream('bench', 'report-render', id);
  const plateau = 0.93 - 0.08 * Math.abs(Math.log10(learningRate) + 2) - 0.02 * Math.abs(Math.log2(width) - 6) / 3;
  const speed = 2 + 6 * rng();
  return Array.from({ length: epochs }, (_, i) => {
    const auc = 0.5 + (plateau - 0.5) * (1 - Math.exp(-(i + 1) / speed)) + 0.01 * (rng() - 0.5);
    return { epoch: i + 1, trainLoss: 0.7 - 0.3 * auc, validationLoss: 0.72 - 0.3 * auc, metrics: { auc, accuracy: auc - 0.05 }, seconds: 0.05 };
  });
}

/** A study document of `trials` configurations run by successive halving (eta 3) to 27 epochs. */
export function halvingStudy(trials: number): StudyDocument {
  const base = baseDocument();
  const definition = studySchema.parse({
    ...base.definition,
    name: 'bench-report',
    budget: { trials, maxEpochs: RUNG_EPOCHS.at(-1)! },
    sampler: { kind: 'successive-halving', eta: 3, minEpochs: 1, seed: 5 },
  });
  const started = new Date('2026-01-01T00:00:00Z').getTime();
  const records: TrialRecord[] = Array.from({ length: trials }, (_, i) => {
    const id = i + 1;
    const rng = stream('bench', 'report-render', 'configuration', id);
    const learningRate = 10 ** (-4 + 3 * rng());
    const width = Math.round(2 ** (2 + 6 * rng()));
    const curve = curveOf(id, learningRate, width, RUNG_EPOCHS.at(-1)!);
    return {
      id,
      configuration: { depth: 1 + Math.floor(rng() * 4), width, activation: rng() < 0.5 ? 'relu' : 'tanh', learningRate, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0 },
      seed: id,
      status: 'dropped',
      rung: 0,
      bracket: 0,
      epochsTrained: 0,
      curve,
      score: null,
      rungScores: [],
      startedAt: new Date(started + id * 1000).toISOString(),
      endedAt: new Date(started + id * 1000 + 500).toISOString(),
      workerSeconds: 0,
      retries: 0,
      jobs: [],
    };
  });
  let alive = records;
  RUNG_EPOCHS.forEach((epochs, rung) => {
    for (const trial of alive) {
      const score = trial.curve[epochs - 1]!.metrics.auc!;
      const job: JobRecord = { rung, fromEpoch: trial.epochsTrained, toEpoch: epochs, fromCheckpoint: rung > 0, attempts: 1, status: 'done' };
      Object.assign(trial, { rung, epochsTrained: epochs, score, rungScores: [...trial.rungScores, score], workerSeconds: epochs * 0.05, jobs: [...(trial.jobs ?? []), job] });
    }
    alive = [...alive].sort((a, b) => b.score! - a.score!).slice(0, Math.floor(alive.length / 3));
  });
  for (const trial of records) {
    trial.curve = trial.curve.slice(0, trial.epochsTrained);
    if (trial.rung === RUNG_EPOCHS.length - 1) trial.status = 'trained';
  }
  return { ...base, name: definition.name, definition, state: 'finished', trials: records };
}

interface RenderRow {
  trials: number;
  plotSeconds: number;
  reportBytes: number;
  drawSeconds: number | null;
}

async function drawSeconds(report: string): Promise<number | null> {
  if (!existsSync(CHROMIUM)) return null;
  const browser = await chromium.launch({ executablePath: CHROMIUM, args: ['--headless', '--no-sandbox', '--disable-gpu', '--no-first-run', '--disable-background-networking'] });
  try {
    const times: number[] = [];
    for (let i = 0; i < 3; i++) {
      const page = await browser.newPage({ viewport: { width: 1400, height: 900 } });
      const begun = performance.now();
      await page.goto(pathToFileURL(report).href, { waitUntil: 'load' });
      // Runs in the page, where requestAnimationFrame exists (Node's types do not have it).
      await page.evaluate('new Promise((resolve) => requestAnimationFrame(() => requestAnimationFrame(() => resolve(undefined))))');
      times.push((performance.now() - begun) / 1000);
      await page.close();
    }
    return median(times);
  } finally {
    await browser.close();
  }
}

async function measure(trials: number): Promise<RenderRow> {
  const dir = await tempDir('report-render');
  try {
    const store = await StudyStore.create(dir, halvingStudy(trials));
    await store.save();
    const out = path.join(dir, 'plots');
    const begun = performance.now();
    await plot({ dir, out });
    const plotSeconds = (performance.now() - begun) / 1000;
    const report = path.join(out, 'report.html');
    return { trials, plotSeconds, reportBytes: (await stat(report)).size, drawSeconds: await drawSeconds(report) };
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

const mib = (bytes: number): string => fmt(bytes / 2 ** 20);

export async function reportRenderGroup(options: BenchOptions): Promise<GroupResult> {
  const sizes = options.quick ? [300, 1000] : [1000, 10_000];
  const rows: RenderRow[] = [];
  for (const trials of sizes) {
    rows.push(await measure(trials));
    const row = rows.at(-1)!;
    console.log(`   ${trials} trials: plot ${fmt(row.plotSeconds)} s, report.html ${mib(row.reportBytes)} MiB, drawn in ${row.drawSeconds === null ? '-' : fmt(row.drawSeconds)} s`);
  }
  const large = rows.at(-1)!;
  return {
    group: 'report-render',
    title: 'The report of a successive-halving study (rungs at 1, 3, 9, 27 epochs) in headless Chromium',
    tables: [
      {
        title: 'plot: the command function in this process; drawn: navigation to the second animation frame after load, 1400 x 900, median of 3',
        columns: ['configurations', 'plot (s)', 'report.html (MiB)', 'drawn in Chromium (s)'],
        rows: rows.map((r) => [r.trials.toLocaleString('en-US'), fmt(r.plotSeconds), mib(r.reportBytes), r.drawSeconds === null ? 'no Chromium' : fmt(r.drawSeconds)]),
      },
    ],
    targets: [
      { target: 'report of 10,000 trials under 3 MB (issue 27)', measured: `${mib(large.reportBytes)} MiB at ${large.trials.toLocaleString('en-US')}`, holds: large.trials >= 10_000 ? large.reportBytes < 3e6 : null },
      {
        target: 'report of 10,000 trials drawn in under 2 s (issue 27)',
        measured: large.drawSeconds === null ? 'no Chromium at /usr/bin/chromium' : `${fmt(large.drawSeconds)} s at ${large.trials.toLocaleString('en-US')}`,
        holds: large.drawSeconds === null || large.trials < 10_000 ? null : large.drawSeconds < 2,
      },
    ],
    notes: ['3 MB is read as 3,000,000 bytes. The machine is shared, so the drawing time varies with the load average printed above.'],
    data: rows,
  };
}
