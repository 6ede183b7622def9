/**
 * Scheduling overhead of the run loop: a study whose worker trains nothing (bench/fixtures/
 * instant-worker), one worker and sequential trial ids (random search), so for every trial k:
 * dispatch = result of k leaves the worker -> trial k+1 started (job-started event), and
 * recorded = result of k leaves the worker -> trial k on disk (trial-finished, emitted after the save).
 * The store's own cost is then timed apart by saving the finished study's document again.
 */
import { rm } from 'node:fs/promises';
import path from 'node:path';
import { runStudy } from '../src/runner/run-study.js';
import { StudyStore } from '../src/store/study-store.js';
import type { BenchOptions } from './index.js';
import { MARKER_EPOCH } from './fixtures/instant-worker.js';
import { fmt, median, quantile, type GroupResult } from './report.js';
import { tempDir, writeDefinition, writeTinyCsv } from './studies.js';

const now = (): number => performance.timeOrigin + performance.now();

interface Gaps {
  /** Result of trial k posted in the worker -> trial k+1 started (ms). */
  dispatch: number[];
  /** Result of trial k posted -> trial k recorded on disk and announced (ms). */
  recorded: number[];
}

async function measureStudy(trials: number): Promise<{ gaps: Gaps; wallSeconds: number; saveMs: number }> {
  const dir = await tempDir('overhead');
  try {
    const csv = await writeTinyCsv(dir);
    const definition = await writeDefinition(dir, {
      name: 'bench-overhead',
      data: { csv: path.basename(csv), target: 'label', task: 'binary' },
      space: { depth: { min: 1, max: 2 }, width: { min: 4, max: 8 }, activation: ['relu'], learningRate: { min: 0.001, max: 0.1 } },
      budget: { trials, maxEpochs: 1 },
      sampler: { kind: 'random', seed: 1 },
      threads: 1,
    });
    const threadFile = new URL('./fixtures/instant-worker.js', import.meta.url).pathname;
    // Timestamps by trial id, paired after the run; the worker's marker comes back in each trial's curve.
    const started = new Map<number, number>();
    const finished = new Map<number, number>();
    const studyStarted = now();
    const outcome = await runStudy(definition, {
      out: path.join(dir, 'run'),
      threads: 1,
      threadFile,
      onEvent: (event) => {
        const at = now();
        if (event.type === 'job-started') started.set(event.job.trialId, at);
        else if (event.type === 'trial-finished') finished.set(event.trial.id, at);
      },
    });
    const posted = new Map<number, number>();
    for (const trial of outcome.doc.trials) {
      const marker = trial.curve.find((point) => point.epoch === MARKER_EPOCH);
      if (marker) posted.set(trial.id, marker.seconds);
    }
    const gaps: Gaps = { dispatch: [], recorded: [] };
    for (const [id, sent] of [...posted].sort((x, y) => x[0] - y[0])) {
      const next = started.get(id + 1);
      if (next !== undefined) gaps.dispatch.push(next - sent);
      const onDisk = finished.get(id);
      if (onDisk !== undefined) gaps.recorded.push(onDisk - sent);
    }
    const wallSeconds = (now() - studyStarted) / 1000;
    // The store's share: save the finished study's document again, as settle() does once per job.
    const store = await StudyStore.open(path.join(dir, 'run'));
    const saves: number[] = [];
    for (let i = 0; i < 15; i++) {
      const at = now();
      await store.save();
      saves.push(now() - at);
    }
    return { gaps, wallSeconds, saveMs: median(saves) };
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

export async function overheadGroup(options: BenchOptions): Promise<GroupResult> {
  const sizes = options.quick ? [50] : [100, 500];
  const rows: (string | number)[][] = [];
  const data: unknown[] = [];
  let medianTotalOfLargest = NaN;
  for (const trials of sizes) {
    const { gaps, wallSeconds, saveMs } = await measureStudy(trials);
    if (gaps.dispatch.length === 0) throw new Error('overhead: no result was paired with the next job start');
    const tail = (values: number[]): number[] => values.slice(Math.floor(values.length * 0.9));
    for (const [name, values] of Object.entries(gaps) as [keyof Gaps, number[]][]) {
      rows.push([trials, name, median(values), quantile(values, 0.95), median(tail(values)), Math.max(...values)]);
    }
    rows.push([trials, 'store save() of the final document, alone', saveMs, '', '', '']);
    rows.push([trials, 'wall per trial (whole study)', (wallSeconds * 1000) / trials, '', '', '']);
    medianTotalOfLargest = median(gaps.dispatch);
    data.push({ trials, wallSeconds, saveMs, gaps });
  }
  const largest = sizes.at(-1)!;
  return {
    group: 'overhead',
    title: '3. Scheduling overhead per trial (threads that train nothing, 1 worker)',
    tables: [
      {
        title: 'Milliseconds per trial',
        columns: ['trials in study', 'interval', 'median', 'p95', 'median of last 10%', 'max'],
        rows,
      },
    ],
    targets: [
      {
        target: 'result -> next trial started (dispatch) under 2 ms per trial',
        measured: `median ${fmt(medianTotalOfLargest)} ms at ${largest} trials`,
        holds: medianTotalOfLargest < 2,
      },
    ],
    notes: [
      'dispatch = result of trial k posted by the worker -> trial k+1 started: message transfer, sampler report, record update, ranking, checkpoint pruning and the loop\'s next turn. The run loop starts the next job before saving.',
      'recorded = result posted -> trial-finished event, which the run loop emits once the study file holding the trial is on disk (saves coalesce while one is under way).',
      'The store row saves the finished study\'s document again (each trial holds a one-point curve, the marker): the cost of one write at that size.',
      'Growth of "median of last 10%" over the median shows costs that grow with the number of recorded trials.',
    ],
    data,
  };
}
