/**
 * A study with deliberately bad settings (plain gradient descent, learning rates up to 5, deep ReLU
 * networks) on the demo data: every collapsed or diverged trial is flagged, none ranks first, and
 * TPE's proposals move away from the learning rates that broke.
 */
import { copyFile, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runStudy } from '../src/runner/run-study.js';
import type { StudyOutcome } from '../src/runner/execute-study.js';

const DEMO_CSV = fileURLToPath(new URL('../studies/demo/pump-logs.csv', import.meta.url));
/** The bad region's edge: of the 4 start-up trials at or above it, 2 diverged and 1 barely beat the constant predictor (measured). */
const BAD_REGION = 1;
let dir: string;
let outcome: StudyOutcome;

beforeAll(async () => {
  dir = await mkdtemp(path.join(tmpdir(), 'rungwise-bad-settings-'));
  await copyFile(DEMO_CSV, path.join(dir, 'pump-logs.csv'));
  const definition = {
    name: 'bad-settings',
    data: { csv: 'pump-logs.csv', target: 'fails_within_week', task: 'binary', splitSeed: 1 },
    space: { depth: { min: 2, max: 3 }, width: { min: 32, max: 128, log: true }, activation: ['relu'], learningRate: { min: 0.1, max: 5 }, batchSize: [16], optimizer: ['sgd'] },
    budget: { trials: 28, maxEpochs: 4 },
    sampler: { kind: 'tpe', seed: 3, startupTrials: 8, batchSize: 4 },
    goal: { metric: 'accuracy' },
    threads: 2,
  };
  await writeFile(path.join(dir, 'study.json'), JSON.stringify(definition));
  outcome = await runStudy(path.join(dir, 'study.json'), { out: path.join(dir, 'run') });
}, 300_000);
afterAll(async () => rm(dir, { recursive: true, force: true }));

/** The majority class's share of the validation rows, counted from the CSV and the split record. */
async function majorityShare(): Promise<number> {
  const lines = (await readFile(DEMO_CSV, 'utf8')).trim().split('\n').slice(1);
  const splits = JSON.parse(await readFile(path.join(dir, 'run', 'splits.json'), 'utf8')) as { validation: number[] };
  const counts = new Map<string, number>();
  for (const row of splits.validation) {
    const label = lines[row - 1]!.split(',').at(-1)!;
    counts.set(label, (counts.get(label) ?? 0) + 1);
  }
  return Math.max(...counts.values()) / splits.validation.length;
}

describe('a study with deliberately bad settings', () => {
  it('records the constant baseline: the validation rows\' majority share as its accuracy', async () => {
    // Derived: predicting the majority class for every row is right on exactly that class's rows.
    expect(outcome.doc.baselines?.constant.metrics.accuracy).toBeCloseTo(await majorityShare(), 12);
  });

  it('flags every diverged trial and every trial no better than the constant predictor, and never ranks one first', async () => {
    const constant = await majorityShare();
    const trials = outcome.doc.trials;
    const broken = trials.filter((t) => t.status === 'diverged' || (t.score !== null && t.score <= constant));
    expect(broken.length).toBeGreaterThan(0);
    for (const trial of broken) expect(trial.flags ?? [], `trial ${trial.id}`).not.toEqual([]);
    for (const trial of trials.filter((t) => t.status === 'diverged')) expect(trial.flags).toContain('blew-up');
    const ranking = outcome.ranking.map((r) => r.trial);
    expect(ranking[0]!.flags ?? []).toEqual([]);
    const firstFlagged = ranking.findIndex((t) => (t.flags?.length ?? 0) > 0);
    if (firstFlagged >= 0) expect(ranking.slice(firstFlagged).every((t) => (t.flags?.length ?? 0) > 0)).toBe(true);
  });

  it('TPE proposes the bad region far less often once its model has seen the flagged trials', () => {
    const trials = outcome.doc.trials;
    const share = (group: typeof trials): number => group.filter((t) => t.configuration.learningRate >= BAD_REGION).length / group.length;
    const design = trials.filter((t) => t.origin?.method === 'sobol');
    const model = trials.filter((t) => t.origin?.method === 'tpe');
    expect(design).toHaveLength(8);
    expect(model).toHaveLength(20);
    // The Sobol start-up design spreads over the whole range, so it samples the bad region.
    expect(share(design)).toBeGreaterThanOrEqual(0.375);
    expect(share(model)).toBeLessThanOrEqual(share(design) / 3);
    const meanLogRate = (group: typeof trials): number => group.reduce((sum, t) => sum + Math.log(t.configuration.learningRate), 0) / group.length;
    expect(meanLogRate(model.slice(-8))).toBeLessThan(meanLogRate(design));
  });
});
