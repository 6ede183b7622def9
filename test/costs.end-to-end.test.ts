/**
 * Costs where they were not yet tested: with k folds, over Redis, and for a multiclass study from
 * the study file to `predict`.
 */
import { copyFile, readFile } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { exportModel } from '../src/commands/export.js';
import { predictCsv } from '../src/commands/predict.js';
import { readConfiguration } from '../src/export/configuration.js';
import { runStudy } from '../src/runner/run-study.js';
import { queuedStudy } from '../src/transports/redis/study.js';
import { spawnWorker, startRedis, stopStarted } from './helpers/redis-server.js';
import { studyOutcome } from './helpers/study-outcome.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

const BINARY_COSTS = { unit: 'EUR', cells: [{ actual: 'yes', predicted: 'no', cost: 800 }, { actual: 'no', predicted: 'yes', cost: 40 }] };

/** The tiny binary study ranked by cost (the goal costs give by default). */
function costStudy(overrides: Parameters<typeof tinyStudy>[0] = {}) {
  const { goal: _auc, ...base } = tinyStudy(overrides);
  return { ...base, data: { ...base.data, costs: BINARY_COSTS, ...(overrides.data ?? {}) } };
}

describe('costs with k folds', () => {
  it('score each trial by the fold mean of the cost with its standard error, and the export retrains and prices the test split', async () => {
    const base = tinyStudy();
    const file = await writeTinyStudy(costStudy({ data: { ...base.data, folds: 3 }, budget: { trials: 3, maxEpochs: 3 } }));
    const out = path.join(path.dirname(file), 'run');
    const { doc, ranking } = await runStudy(file, { out });
    expect(doc.goal).toEqual({ metric: 'cost', better: 'lower' });
    for (const { trial } of ranking) {
      const last = trial.curve.at(-1)!;
      expect(trial.score).toBe(last.metrics.cost);
      expect(trial.scoreStandardError).toBe(last.standardErrors?.cost);
      expect(Number.isFinite(trial.scoreStandardError)).toBe(true);
    }
    const scores = ranking.map((r) => r.trial.score);
    expect(scores).toEqual([...scores].sort((a, b) => a - b));
    const summary = await exportModel({ dir: out });
    expect(summary.folds).toBe(3);
    expect(summary.retrained).toBe(true);
    expect(summary.threshold?.rule).toEqual({ choose: 'least-cost' });
    expect(summary.test?.cost).toBeGreaterThanOrEqual(0);
  }, 180_000);
});

describe('costs over Redis', () => {
  afterAll(stopStarted);

  it('give the same trials, costs and ranking on a remote worker as on local threads', async () => {
    const redis = await startRedis();
    await spawnWorker(redis.url, ['--threads', '1']).printed(/taking jobs from/);
    const definition = { ...costStudy({ budget: { trials: 4, maxEpochs: 3 } }), name: 'costs-remote' };
    const file = await writeTinyStudy(definition);
    const local = path.join(path.dirname(file), 'local');
    await runStudy(file, { out: local, threads: 2 });
    const remote = path.join(path.dirname(file), 'remote');
    const remoteRun = await runStudy(file, { out: remote, transport: queuedStudy({ url: redis.url, studyName: definition.name, runDir: remote, fresh: true }).transport });
    const expected = await studyOutcome(local);
    expect(expected.trials.every((t) => t.curve.every((p) => typeof p.metrics.cost === 'number'))).toBe(true);
    expect(await studyOutcome(remote)).toEqual(expected);
    expect(remoteRun.doc.trials.flatMap((t) => t.jobs.map((j) => j.ranOn)).every((p) => p?.includes('/'))).toBe(true);
  }, 180_000);
});

describe('multiclass costs end to end', () => {
  it('rank by cost, export the least-expected-cost decision, and predict gives each row the class of least expected cost', async () => {
    // Invented costs for the tiny fault kinds: missing a bearing fault costs most, a needless seal job little.
    const cells = [
      { actual: 'bearing', predicted: 'none', cost: 50 },
      { actual: 'bearing', predicted: 'seal', cost: 20 },
      { actual: 'seal', predicted: 'none', cost: 10 },
      { actual: 'seal', predicted: 'bearing', cost: 5 },
      { actual: 'none', predicted: 'bearing', cost: 4 },
      { actual: 'none', predicted: 'seal', cost: 1 },
    ];
    const base = tinyStudy({ budget: { trials: 3, maxEpochs: 4 } });
    const { goal: _accuracy, ...rest } = base;
    const file = await writeTinyStudy({ ...rest, name: 'tiny-multiclass-costs', data: { csv: 'tiny-multiclass.csv', target: 'fault_kind', task: 'multiclass', splitSeed: 1, costs: { cells } } });
    const dir = path.dirname(file);
    await copyFile(fileURLToPath(new URL('../studies/tiny/tiny-multiclass.csv', import.meta.url)), path.join(dir, 'tiny-multiclass.csv'));
    const out = path.join(dir, 'run');
    const { doc } = await runStudy(file, { out });
    expect(doc.goal).toEqual({ metric: 'cost', better: 'lower' });
    const summary = await exportModel({ dir: out });
    const configuration = await readConfiguration(summary.out);
    expect(configuration.costs?.decision).toBe('least expected cost');
    const classes = (configuration.outputs as { classes: string[] }).classes;
    const matrix = configuration.costs!.matrix;
    for (const { actual, predicted, cost } of cells) expect(matrix[classes.indexOf(actual)]![classes.indexOf(predicted)]).toBe(cost);

    const predictions = path.join(dir, 'predicted.csv');
    await predictCsv({ model: summary.out, data: path.join(dir, 'tiny-multiclass.csv'), output: predictions });
    const [header, ...lines] = (await readFile(predictions, 'utf8')).trim().split('\n');
    const columns = header!.split(',');
    let differsFromLargest = 0;
    for (const line of lines) {
      const row = line.split(',');
      const p = classes.map((c) => Number(row[columns.indexOf(`p_${c}`)]));
      // Source: Elkan, "The Foundations of Cost-Sensitive Learning", IJCAI 2001, section 2: predict the class j minimising sum_i P(i | x) cost(i, j).
      const expected = classes.map((_, j) => p.reduce((sum, pi, i) => sum + pi * matrix[i]![j]!, 0));
      const best = expected.indexOf(Math.min(...expected));
      expect(row[columns.indexOf('predicted')]).toBe(classes[best]);
      if (best !== p.indexOf(Math.max(...p))) differsFromLargest++;
    }
    // The costs change some decisions: the check is not the largest probability in disguise.
    expect(differsFromLargest).toBeGreaterThan(0);
  }, 180_000);
});
