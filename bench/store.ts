/**
 * Study-file growth: cost of one `StudyStore.save()` recording one more finished trial (a 50-epoch
 * curve) in studies already holding 100, 1,000 and 10,000 such trials, and the size of the files.
 */
import { rm, stat } from 'node:fs/promises';
import path from 'node:path';
import { studySchema, type StudyDefinition } from '../src/study/definition.js';
import { StudyStore } from '../src/store/study-store.js';
import type { CurvePoint, TrialRecord } from '../src/core/trial.js';
import type { StudyDocument } from '../src/store/types.js';
import { stream } from '../src/random/streams.js';
import type { BenchOptions } from './index.js';
import { fmt, median, type GroupResult } from './report.js';
import { tempDir } from './studies.js';

const EPOCHS = 50;

export function baseDocument(): StudyDocument {
  const definition: StudyDefinition = studySchema.parse({
    name: 'bench-store',
    data: { csv: 'data.csv', target: 'y', task: 'binary' },
    space: { depth: { min: 1, max: 4 }, width: { min: 4, max: 256, log: true }, activation: ['relu', 'tanh'], learningRate: { min: 1e-4, max: 0.1 } },
    budget: { trials: 10_000, maxEpochs: EPOCHS },
  });
  const now = new Date().toISOString();
  return {
    format: 'rungwise-study',
    version: 3,
    name: definition.name,
    definition,
    definitionFile: '/bench/study.json',
    goal: { metric: 'auc', better: 'higher' },
    data: { file: 'data.csv', rows: 3000, columns: 5, trainRows: 1950, validationRows: 600, testRows: 450, inputCount: 6, missingValues: 0 },
    recipe: { task: 'binary', target: 'y', inputCount: 6, classes: ['no', 'yes'], features: [{ kind: 'numeric', name: 'a', mean: 1.5, std: 0.5 }] },
    state: 'running',
    createdAt: now,
    updatedAt: now,
    trials: [],
  };
}

/** A finished trial (also used by the reports group) with a full curve of plausible, full-precision figures. */
export function trialRecord(id: number): TrialRecord {
  const rng = stream('bench', 'store', id);
  const curve: CurvePoint[] = Array.from({ length: EPOCHS }, (_, i) => ({
    epoch: i + 1,
    trainLoss: 0.7 * Math.exp(-i / 20) + 0.05 * rng(),
    validationLoss: 0.7 * Math.exp(-i / 25) + 0.05 * rng(),
    metrics: { accuracy: 0.7 + 0.2 * rng(), macroF1: 0.7 + 0.2 * rng(), auc: 0.75 + 0.2 * rng(), logLoss: 0.3 + 0.2 * rng() },
    seconds: 0.05 + 0.01 * rng(),
  }));
  return {
    id,
    configuration: { depth: 2, width: 64, activation: 'relu', learningRate: 0.001 + rng() * 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0 },
    seed: Math.floor(rng() * 2 ** 31),
    status: 'trained',
    rung: 0,
    bracket: 0,
    epochsTrained: EPOCHS,
    curve,
    score: curve.at(-1)!.metrics.auc!,
    rungScores: [curve.at(-1)!.metrics.auc!],
    startedAt: new Date().toISOString(),
    endedAt: new Date().toISOString(),
    workerSeconds: 3,
    retries: 0,
    jobs: [{ rung: 0, fromEpoch: 0, toEpoch: EPOCHS, fromCheckpoint: false, attempts: 1, status: 'done' }],
  };
}

interface StoreRow {
  trials: number;
  /** Median cost of one save() after a new finished trial was added. */
  saveMs: number;
  studyBytes: number;
  curveLogBytes: number;
}

async function timeMs(action: () => Promise<void>, repeats: number): Promise<number> {
  const times: number[] = [];
  for (let i = 0; i < repeats; i++) {
    const started = performance.now();
    await action();
    times.push(performance.now() - started);
  }
  return median(times);
}

async function measureSize(trials: number, repeats: number): Promise<StoreRow> {
  const dir = await tempDir('store');
  try {
    const store = await StudyStore.create(dir, baseDocument());
    for (let id = 1; id <= trials; id++) store.doc.trials.push(trialRecord(id));
    await store.save();
    let next = trials + 1;
    // Each timed save records one more finished trial, as after a job ends.
    const saveMs = await timeMs(async () => {
      store.doc.trials.push(trialRecord(next++));
      await store.save();
    }, repeats);
    return { trials, saveMs, studyBytes: (await stat(store.file)).size, curveLogBytes: await sizeOf(path.join(dir, 'curves.jsonl')) };
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

async function sizeOf(file: string): Promise<number> {
  try {
    return (await stat(file)).size;
  } catch {
    return 0; // a store that keeps curves inside study.json has no curve log
  }
}

const mib = (bytes: number): string => `${fmt(bytes / 2 ** 20)} MiB`;

export async function storeGroup(options: BenchOptions): Promise<GroupResult> {
  const sizes = options.quick ? [100, 1000] : [100, 1000, 10_000];
  const rows: StoreRow[] = [];
  for (const trials of sizes) {
    rows.push(await measureSize(trials, trials >= 10_000 ? 3 : 7));
    console.log(`   ${trials} trials: save ${fmt(rows.at(-1)!.saveMs)} ms`);
  }
  const first = rows[0]!;
  const last = rows.at(-1)!;
  const growth = last.saveMs / first.saveMs;
  const trialGrowth = last.trials / first.trials;
  return {
    group: 'store',
    title: '4. Study file growth (50-epoch curves)',
    tables: [
      {
        title: 'Cost of one write recording one more trial (median) and file sizes',
        columns: ['trials held', 'save() (ms)', 'ms per 1,000 trials held', 'study.json', 'curves.jsonl'],
        rows: rows.map((r) => [r.trials, r.saveMs, fmt((r.saveMs / r.trials) * 1000, 2), mib(r.studyBytes), mib(r.curveLogBytes)]),
      },
    ],
    targets: [
      {
        target: 'cost per write does not grow in proportion to the number of trials',
        measured: `save() ${fmt(first.saveMs)} ms at ${first.trials} trials -> ${fmt(last.saveMs)} ms at ${last.trials} (${fmt(growth)}x for ${fmt(trialGrowth)}x the trials)`,
        holds: growth < trialGrowth / 4,
      },
    ],
    notes: [
      'save() appends the changed curves to curves.jsonl (fsync) and rewrites study.json without curves (a durable temporary-file write and rename, old version hard-linked to study.json.prev).',
      'What still grows is the rewrite of study.json, which holds every trial record (about 400 bytes each without its curve).',
    ],
    data: rows,
  };
}
