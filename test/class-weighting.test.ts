/**
 * Class weighting as a dimension of the search space: the effective-number formula, drawing (spaces
 * without it draw as before), the trainer computing a trial's weights from its training rows (the same
 * weights and losses as the study-level setting), the refusals and the warning, and a study that
 * searches the weighting end to end.
 */
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { balancedWeights, classCounts, effectiveNumberWeights, weightsForCounts } from '../src/core/class-weighting.js';
import { trainingClassWeights } from '../src/data/class-weights.js';
import { configurationForTrial } from '../src/space/sample.js';
import { configurationAt, pointOfConfiguration, spaceDimensions } from '../src/space/dimensions.js';
import { spaceSchema } from '../src/space/schema.js';
import { studyFromObject } from '../src/study/load.js';
import { withConfiguredClassWeights } from '../src/trainers/shared/class-weights.js';
import { runTrainRequest } from '../src/trainers/run-request.js';
import { configurationSchema } from '../src/transports/redis/messages.js';
import { runStudy } from '../src/runner/run-study.js';
import { rankingTable } from '../src/report/ranking-table.js';
import { syntheticDataset, trainRequest } from './helpers/synthetic.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';
import { queuedStudy } from '../src/transports/redis/study.js';
import { spawnWorker, startRedis, stopStarted } from './helpers/redis-server.js';
import { studyOutcome } from './helpers/study-outcome.js';

describe('the effective number of samples (Cui et al. 2019)', () => {
  it('E_1 = 1 and E_n = (1 - beta^n) / (1 - beta): the weight of a class is 1 / E_n', () => {
    // Source: Cui, Jia, Lin, Song, Belongie, "Class-Balanced Loss Based on Effective Number of Samples", CVPR 2019, section 3, eq. 3 (E_1 = 1).
    expect(effectiveNumberWeights([1], 0.9)[0]).toBeCloseTo(1, 12);
    // E_2 = 1 + beta (eq. 3 unrolled: E_n = 1 + beta E_{n-1}), so w = 1 / 1.9 at beta 0.9.
    expect(effectiveNumberWeights([2], 0.9)[0]).toBeCloseTo(1 / 1.9, 12);
  });

  it('beta -> 0 weighs every class the same and beta -> 1 gives the balanced (inverse frequency) weights', () => {
    // Source: Cui et al. 2019, section 3.1: "beta = 0 corresponds to no re-weighting and beta -> 1 corresponds to re-weighing by inverse class frequency".
    const counts = [1435, 515];
    const nearZero = weightsForCounts('effective', counts, 1e-9)!;
    nearZero.forEach((w) => expect(w).toBeCloseTo(1, 9));
    const nearOne = weightsForCounts('effective', counts, 1 - 1e-9)!;
    const balanced = weightsForCounts('balanced', counts)!;
    nearOne.forEach((w, c) => expect(w).toBeCloseTo(balanced[c]!, 4));
    // In between, the rare class weighs more than under none and less than under balanced.
    const between = weightsForCounts('effective', counts, 0.999)!;
    expect(between[1]!).toBeGreaterThan(1);
    expect(between[1]!).toBeLessThan(balanced[1]!);
  });

  it('balanced is the same formula the study-level data.classWeights uses, and none gives no weights', () => {
    // Source: scikit-learn documentation, compute_class_weight('balanced') example: y = [1, 1, 1, 1, 0, 0] gives [1.5, 0.75].
    expect(balancedWeights([2, 4])).toEqual([1.5, 0.75]);
    const labels = [0, 0, 1, 2, 2, 2, 2, 1, 0, 2];
    expect(weightsForCounts('balanced', classCounts(labels, 3))).toEqual(trainingClassWeights('balanced', ['a', 'b', 'c'], labels));
    expect(weightsForCounts('none', [3, 7])).toBeUndefined();
  });
});

const space = spaceSchema.parse({ depth: { min: 1, max: 3 }, width: { min: 4, max: 64, log: true }, activation: ['relu', 'tanh'], learningRate: { min: 0.001, max: 0.1 }, l2: { min: 1e-6, max: 1e-2 } });
const weighted = spaceSchema.parse({ ...space, classWeights: ['none', 'balanced', 'effective'], effectiveBeta: 0.99 });

describe('the classWeights dimension', () => {
  it('adds one draw after the others: every other field is drawn as in a space without it', () => {
    const seen = new Set<string>();
    for (let trial = 0; trial < 30; trial++) {
      const plain = configurationForTrial(space, 5, trial);
      const { classWeights, effectiveBeta, ...rest } = configurationForTrial(weighted, 5, trial);
      expect(rest).toEqual(plain);
      expect(plain.classWeights).toBeUndefined();
      seen.add(classWeights!);
      expect(effectiveBeta).toBe(classWeights === 'effective' ? 0.99 : undefined);
    }
    expect([...seen].sort()).toEqual(['balanced', 'effective', 'none']);
  });

  it('is a categorical dimension of the unit cube: a configuration maps to its point and back', () => {
    const dimensions = spaceDimensions(weighted);
    expect(dimensions.at(-1)).toEqual({ kind: 'categorical', name: 'classWeights', choices: ['none', 'balanced', 'effective'] });
    expect(spaceDimensions(space).some((d) => d.name === 'classWeights')).toBe(false);
    for (let trial = 0; trial < 10; trial++) {
      const configuration = configurationForTrial(weighted, 9, trial);
      const back = configurationAt(weighted, pointOfConfiguration(weighted, configuration));
      expect(back.classWeights).toBe(configuration.classWeights);
      expect(back.effectiveBeta).toBe(configuration.effectiveBeta);
    }
  });

  it('travels in a Redis job: the job configuration schema takes the two fields and refuses a weighting it does not know', () => {
    const configuration = { ...configurationForTrial(weighted, 5, 0), classWeights: 'effective', effectiveBeta: 0.99 };
    expect(configurationSchema.parse(configuration)).toEqual(configuration);
    expect(configurationSchema.safeParse({ ...configuration, classWeights: 'heavy' }).success).toBe(false);
  });
});

describe('a trial trains with the weights its configuration chooses', () => {
  const base = syntheticDataset({ task: 'multiclass', rows: 150, inputs: 4, classes: 3, seed: 4 });

  it('computes them from the training rows the job trains on; none and absent leave the data set unweighted', () => {
    const counts = classCounts(base.train.y, 3);
    const request = trainRequest(base, { params: { classWeights: 'effective', effectiveBeta: 0.9 } });
    expect(withConfiguredClassWeights(request).dataset.classWeights).toEqual(weightsForCounts('effective', counts, 0.9));
    expect(withConfiguredClassWeights(request).dataset.id).toBe(base.id);
    expect(withConfiguredClassWeights(trainRequest({ ...base, classWeights: [1, 2, 3] }, { params: { classWeights: 'none' } })).dataset.classWeights).toBeUndefined();
    const untouched = trainRequest(base);
    expect(withConfiguredClassWeights(untouched)).toBe(untouched);
  });

  for (const trainer of ['engine', 'tfjs'] as const) {
    it(`${trainer}: balanced chosen by the trial trains exactly as balanced weights set on the data set`, async () => {
      const weights = trainingClassWeights('balanced', ['a', 'b', 'c'], base.train.y)!;
      const bySpace = await runTrainRequest(trainRequest(base, { toEpoch: 2, trainer, params: { classWeights: 'balanced' } }));
      const byData = await runTrainRequest(trainRequest({ ...base, id: `${base.id}-balanced`, classWeights: weights }, { toEpoch: 2, trainer }));
      const plain = await runTrainRequest(trainRequest(base, { toEpoch: 2, trainer }));
      expect(bySpace.epochs.map((e) => e.trainLoss)).toEqual(byData.epochs.map((e) => e.trainLoss));
      expect(bySpace.epochs[0]!.trainLoss).not.toBe(plain.epochs[0]!.trainLoss);
    });
  }
});

describe('the definition', () => {
  const base = { name: 'w', data: { csv: 'x.csv', target: 'y', task: 'binary' }, space: { depth: { min: 1, max: 1 }, width: { min: 4, max: 4 }, activation: ['relu'], learningRate: { min: 0.01, max: 0.01 } }, budget: { trials: 1, maxEpochs: 1 }, sampler: { kind: 'random' } };

  it('refuses space.classWeights together with data.classWeights, on a regression task, and effectiveBeta alone', () => {
    expect(() => studyFromObject({ ...base, data: { ...base.data, classWeights: 'balanced' }, space: { ...base.space, classWeights: ['none', 'balanced'] } }, '.')).toThrow(/space\.classWeights: and data\.classWeights both set the class weights/);
    expect(() => studyFromObject({ ...base, data: { ...base.data, task: 'regression' }, space: { ...base.space, classWeights: ['none'] } }, '.')).toThrow(/space\.classWeights: is for classification/);
    expect(() => studyFromObject({ ...base, space: { ...base.space, effectiveBeta: 0.9 } }, '.')).toThrow(/space\.effectiveBeta: is the beta of the "effective" class weighting/);
    expect(() => studyFromObject({ ...base, space: { ...base.space, classWeights: ['heavy'] } }, '.')).toThrow(/space\.classWeights\[0\]: found "heavy", expected one of "none", "balanced", "effective"/);
  });

  it('asks tryFirst entries for the weighting when the space has one', () => {
    const listed = { depth: 1, width: 4, activation: 'relu', learningRate: 0.01, batchSize: 32 };
    const spaceWith = { ...base.space, classWeights: ['none', 'effective'] };
    expect(() => studyFromObject({ ...base, space: spaceWith, tryFirst: [listed] }, '.')).toThrow(/tryFirst\[0\]: lacks classWeights/);
    expect(() => studyFromObject({ ...base, space: spaceWith, tryFirst: [{ ...listed, classWeights: 'effective' }] }, '.')).toThrow(/tryFirst\[0\]: lacks effectiveBeta/);
    expect(() => studyFromObject({ ...base, tryFirst: [{ ...listed, classWeights: 'none' }] }, '.')).toThrow(/tryFirst\[0\]: gives classWeights but the space has no classWeights/);
    expect(studyFromObject({ ...base, space: spaceWith, tryFirst: [{ ...listed, classWeights: 'effective', effectiveBeta: 0.99 }] }, '.').definition.tryFirst).toHaveLength(1);
  });

  it('warns when the goal is accuracy and the space fixes the weighting to balanced, not when it offers a choice', () => {
    const notes = (spaceWeights: string[], metric: string) => studyFromObject({ ...base, space: { ...base.space, classWeights: spaceWeights }, goal: { metric } }, '.').notes ?? [];
    expect(notes(['balanced'], 'accuracy').join('\n')).toMatch(/warning: space\.classWeights is only "balanced" while the goal is accuracy/);
    expect(notes(['none', 'balanced'], 'accuracy')).toEqual([]);
    expect(notes(['balanced'], 'macroF1')).toEqual([]);
  });
});

describe('a study that searches the class weighting', () => {
  it('trains each trial with its weighting and shows it in the ranking beside accuracy and macro-F1', async () => {
    const file = await writeTinyStudy(tinyStudy({ space: { ...tinyStudy().space, classWeights: ['none', 'balanced', 'effective'] }, budget: { trials: 6, maxEpochs: 2 }, goal: { metric: 'macroF1' } }));
    const out = path.join(path.dirname(file), 'run');
    const outcome = await runStudy(file, { out });
    const doc = JSON.parse(await readFile(outcome.file, 'utf8')) as { trials: { status: string; configuration: { classWeights?: string } }[] };
    expect(doc.trials.map((t) => t.status)).toEqual(Array(6).fill('trained'));
    const weightings = doc.trials.map((t) => t.configuration.classWeights);
    expect(weightings.every((w) => w === 'none' || w === 'balanced' || w === 'effective')).toBe(true);
    expect(new Set(weightings).size).toBeGreaterThan(1);
    const table = rankingTable(outcome.ranking, { metric: 'macroF1', better: 'higher' });
    expect(table.split('\n')[0]).toMatch(/macroF1 .*accuracy.*class weights/);
  });
});

describe('a searched class weighting on remote workers', () => {
  afterAll(stopStarted);

  it('gives the trials of local threads, with 3 folds (each fold weighs its own training rows)', async () => {
    const redis = await startRedis();
    const worker = spawnWorker(redis.url, ['--threads', '1']);
    await worker.printed(/taking jobs from/);
    const base = tinyStudy();
    const definition = tinyStudy({ name: 'weights-remote', data: { ...base.data, folds: 3 }, space: { ...base.space, classWeights: ['none', 'balanced', 'effective'], effectiveBeta: 0.9 }, budget: { trials: 6, maxEpochs: 2 }, goal: { metric: 'macroF1' }, threads: 2 });
    const file = await writeTinyStudy(definition);
    const local = path.join(path.dirname(file), 'local');
    await runStudy(file, { out: local, threads: 2 });
    const remote = path.join(path.dirname(file), 'remote');
    const remoteRun = await runStudy(file, { out: remote, transport: queuedStudy({ url: redis.url, studyName: definition.name, runDir: remote, fresh: true }).transport });
    const expected = await studyOutcome(local);
    expect(expected.state).toBe('finished');
    expect(await studyOutcome(remote)).toEqual(expected);
    expect(new Set(remoteRun.doc.trials.map((t) => t.configuration.classWeights)).size).toBeGreaterThan(1);
    expect(remoteRun.doc.trials.flatMap((t) => t.jobs.map((j) => j.ranOn)).every((p) => p?.includes('/'))).toBe(true);
  }, 180_000);
});
