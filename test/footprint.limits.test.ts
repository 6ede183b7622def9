/**
 * Size and speed limits: the weight count of a configuration, the cut to a weight limit (never
 * proposed over it, by every sampler, the same whatever the thread count), the time per row, and the
 * time limit's flag in the one ranking rule.
 */
import { readFileSync } from 'node:fs';
import { mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import * as tf from '@tensorflow/tfjs';
import { describe, expect, it } from 'vitest';
import { fitWeightLimit, weightCount } from '../src/core/size.js';
import { createSampler, SAMPLER_PLUGINS } from '../src/samplers/index.js';
import type { Job, Sampler } from '../src/samplers/sampler.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { studySchema } from '../src/study/definition.js';
import { checkFootprint, mostInputs, spaceChoices } from '../src/study/footprint.js';
import { measureRowMicroseconds, median } from '../src/trainers/engine/row-timing.js';
import { runStudy } from '../src/runner/run-study.js';
import { ClosedFormTransport } from '../src/transports/closed-form.js';
import { DEFAULT_PREPROCESSING, type TrialConfiguration } from '../src/core/configuration.js';
import { readCsv } from '../src/data/csv.js';
import { prepareData } from '../src/data/prepare.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';
import { studyOutcome } from './helpers/study-outcome.js';

describe('weightCount', () => {
  it('counts the weights and biases of dense layers by hand', () => {
    // Hand-worked: 4 inputs -> 3 -> 3 -> 2 outputs: (4x3 + 3) + (3x3 + 3) + (3x2 + 2) = 15 + 12 + 8 = 35.
    // Common practice (no source): a dense layer of n inputs and m units has n x m weights and m biases.
    expect(weightCount({ depth: 2, width: 3 }, 4, 2)).toBe(35);
    expect(weightCount({ depth: 1, width: 5 }, 10, 1)).toBe(10 * 5 + 5 + 5 * 1 + 1);
  });

  it('equals the trainable parameters tfjs counts for the same network', () => {
    // Source: TensorFlow.js, LayersModel.countParams() (tfjs-layers API reference), as the reference library.
    for (const [depth, width, inputs, outputs] of [[1, 8, 13, 1], [3, 17, 5, 4], [4, 64, 29, 3]] as const) {
      const model = tf.sequential();
      for (let l = 0; l < depth; l++) model.add(tf.layers.dense({ units: width, activation: 'relu', ...(l === 0 ? { inputShape: [inputs] } : {}) }));
      model.add(tf.layers.dense({ units: outputs }));
      expect(weightCount({ depth, width }, inputs, outputs)).toBe(model.countParams());
      model.dispose();
    }
  });
});

describe('fitWeightLimit', () => {
  const ranges = { depth: { min: 1 }, width: { min: 2 } };
  it('leaves a configuration that fits as it is', () => {
    const configuration = { depth: 2, width: 8 };
    expect(fitWeightLimit(configuration, { inputs: 10, outputs: 1 }, 200, ranges)).toBe(configuration);
  });

  it('cuts the width to the widest that fits at the same depth', () => {
    // Hand-worked: 10 inputs, depth 2, 1 output: w^2 + 13w + 1 weights; w = 9 gives 199, w = 10 gives 231.
    expect(fitWeightLimit({ depth: 2, width: 20 }, { inputs: 10, outputs: 1 }, 200, ranges)).toEqual({ depth: 2, width: 9 });
  });

  it('cuts the depth when no width of the range fits at the drawn depth', () => {
    // Hand-worked, width.min 12: depth 3 gives 457, depth 2 gives 301 at width 12; depth 1 has 12w + 1, so w = 16 (193).
    expect(fitWeightLimit({ depth: 3, width: 20 }, { inputs: 10, outputs: 1 }, 200, { depth: { min: 1 }, width: { min: 12 } })).toEqual({ depth: 1, width: 16 });
    expect(fitWeightLimit({ depth: 3, width: 20 }, { inputs: 10, outputs: 1 }, 200, { depth: { min: 2 }, width: { min: 12 } })).toBeUndefined();
  });
});

const LIMITED_SPACE: StudyDefinitionInput['space'] = { depth: { min: 1, max: 4 }, width: { min: 4, max: 128, log: true }, activation: ['relu'], learningRate: { min: 0.001, max: 0.1 }, batchSize: [32], optimizer: ['adam'] };
const SHAPE = { inputs: 12, outputs: 1 };
const MAX_WEIGHTS = 2000;

/** Every configuration the sampler hands out, answering each job with a made-up loss that depends on the configuration alone. */
function drain(sampler: Sampler, limit: number): TrialConfiguration[] {
  const seen = new Map<number, TrialConfiguration>();
  for (let step = 0; step < limit; step++) {
    const job = sampler.next();
    if (job === 'done') break;
    if (job === 'wait') throw new Error('sampler waits with no job running');
    seen.set(job.trialId, job.configuration);
    const { learningRate, width } = (job as Job).configuration;
    sampler.report({ trialId: job.trialId, rung: job.rung, loss: Math.abs(Math.log10(learningRate) + 2) + 4 / width });
  }
  return [...seen.values()];
}

describe.each(SAMPLER_PLUGINS.map((plugin) => [plugin.kind]))('a weight limit with the %s sampler', (kind) => {
  const definition = studySchema.parse(tinyStudy({ space: LIMITED_SPACE, budget: { trials: 24, maxEpochs: 9 }, sampler: { kind, seed: 5 } as StudyDefinitionInput['sampler'] }));
  const limited = { ...definition, weightLimit: { maxWeights: MAX_WEIGHTS, shape: SHAPE } };

  it('never proposes a configuration over the limit, and cuts some that the space would give', () => {
    const free = drain(createSampler(definition), 500);
    const cut = drain(createSampler(limited), 500);
    expect(cut.length).toBeGreaterThan(0);
    for (const configuration of cut) expect(weightCount(configuration, SHAPE.inputs, SHAPE.outputs)).toBeLessThanOrEqual(MAX_WEIGHTS);
    // Without the limit the same seed draws networks over it, so the check above can fail.
    expect(free.some((c) => weightCount(c, SHAPE.inputs, SHAPE.outputs) > MAX_WEIGHTS)).toBe(true);
  });

  it('proposes the same configurations every time for the same seed', () => {
    expect(drain(createSampler(limited), 500)).toEqual(drain(createSampler(limited), 500));
  });
});

describe('checkFootprint', () => {
  const definition = studySchema.parse(tinyStudy({ space: LIMITED_SPACE }));
  it('refuses a limit below the smallest network of the space, naming the field and the least allowed', () => {
    // Hand-worked: depth 1, width 4 over 12 inputs and 1 output: 12x4 + 4 + 4 + 1 = 57 weights.
    expect(() => checkFootprint({ ...definition, footprint: { maxWeights: 56 } }, SHAPE, 'study.json')).toThrow(
      /study\.json: footprint\.maxWeights: 56 is below the smallest network of the space .*57 weights\); allow at least 57/,
    );
    expect(() => checkFootprint({ ...definition, footprint: { maxWeights: 57 } }, SHAPE, 'study.json')).not.toThrow();
  });

  it('refuses a listed configuration over the limit', () => {
    const tryFirst = [{ depth: 1, width: 4, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0 }] as const;
    expect(() => checkFootprint({ ...definition, tryFirst: [...tryFirst, { ...tryFirst[0], depth: 2, width: 64 }], footprint: { maxWeights: 500 } }, SHAPE, 'study.json')).toThrow(
      /tryFirst\[1\]: depth 2, width 64 has 5057 weights, over footprint\.maxWeights 500/,
    );
  });

  it('sizes the smallest network by the choice with the most inputs, numeric encodings included', () => {
    // Hand-worked: the periodic choice gives 40 inputs (the callback's count): depth 1, width 4: 40x4 + 4 + 4 + 1 = 169 weights.
    const encoded = { ...definition, space: { ...definition.space, numericEncoding: ['none', 'periodic'] as ('none' | 'periodic')[] } };
    const inputsOf = (choice: { numericEncoding?: string }): number => (choice.numericEncoding === 'periodic' ? 40 : SHAPE.inputs);
    expect(spaceChoices(encoded.space).map((choice) => choice.numericEncoding ?? 'none')).toEqual(['none', 'periodic']);
    expect(mostInputs(encoded.space, SHAPE.inputs, inputsOf)).toBe(40);
    expect(() => checkFootprint({ ...encoded, footprint: { maxWeights: 168 } }, SHAPE, 'study.json', inputsOf)).toThrow(/40 inputs, 1 output: 169 weights\); allow at least 169/);
    expect(() => checkFootprint({ ...encoded, footprint: { maxWeights: 169 } }, SHAPE, 'study.json', inputsOf)).not.toThrow();
  });
});

describe('the time per row', () => {
  it('is the median of the timed passes', () => {
    expect(median([5, 1, 3])).toBe(3);
    expect(median([4, 1, 3, 2])).toBe(2.5);
  });

  it('is measured on the engine for each task as a positive, finite number of microseconds', () => {
    const configuration: TrialConfiguration = { depth: 2, width: 16, activation: 'tanh', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0.2 };
    for (const shape of [{ task: 'binary', inputCount: 7, outputCount: 1 }, { task: 'multiclass', inputCount: 4, outputCount: 3 }, { task: 'regression', inputCount: 9, outputCount: 1 }] as const) {
      const time = measureRowMicroseconds(configuration, shape, 64, 3);
      expect(Number.isFinite(time) && time > 0).toBe(true);
    }
  });
});

describe('a study with a weight limit and a time limit', () => {
  /** A made-up time per row the transport returns for a job that asks for it: a microsecond per 4 hidden units (deterministic, unlike a real measurement). */
  const fakeTime = (configuration: TrialConfiguration): number => (configuration.depth * configuration.width) / 4;

  async function run(footprint: StudyDefinitionInput['footprint'], threads: number) {
    const file = await writeTinyStudy(tinyStudy({ space: LIMITED_SPACE, budget: { trials: 12, maxEpochs: 3 }, ...(footprint ? { footprint } : {}) }));
    return runStudy(file, {
      out: path.join(path.dirname(file), 'run'),
      transport: () => new ClosedFormTransport({ capacity: threads, rowMicroseconds: fakeTime, evaluate: (c) => ({ validationLoss: 1 / c.width, metrics: { auc: 1 - 1 / (2 + c.width) } }) }),
    });
  }

  it('records weights and time per row, keeps every trial within the weight limit, and flags the slow ones after the rest', async () => {
    const { doc, ranking } = await run({ maxWeights: 3000, maxRowMicroseconds: 10 }, 3);
    const inputs = doc.data.inputCount;
    for (const trial of doc.trials) {
      expect(trial.weightCount).toBe(weightCount(trial.configuration, inputs, 1));
      expect(trial.weightCount).toBeLessThanOrEqual(3000);
      expect(trial.rowMicroseconds).toBe(fakeTime(trial.configuration));
      expect(trial.flags?.includes('too-slow') ?? false).toBe(trial.rowMicroseconds! > 10);
    }
    const slow = ranking.findIndex((r) => r.trial.flags?.includes('too-slow'));
    expect(slow).toBeGreaterThan(0);
    expect(ranking.slice(slow).every((r) => r.trial.flags?.includes('too-slow'))).toBe(true);
    // The best score overall is a slow (wide) network: the limit, not the score, puts it after the others.
    expect(Math.max(...ranking.slice(slow).map((r) => r.trial.score))).toBeGreaterThan(ranking[0]!.trial.score);
  });

  it('proposes the same configurations with a time limit as without, with 1 or 4 threads (the time never reaches the sampler)', async () => {
    const configurations = async (footprint: StudyDefinitionInput['footprint'], threads: number) => (await run(footprint, threads)).doc.trials.map((t) => t.configuration);
    const plain = await configurations({ maxWeights: 3000 }, 1);
    expect(await configurations({ maxWeights: 3000, maxRowMicroseconds: 10 }, 4)).toEqual(plain);
    expect(await configurations({ maxWeights: 3000 }, 4)).toEqual(plain);
  });
});

describe('the time per row measured in the training threads', () => {
  it('is recorded for every trial with 1 and with 2 threads, and the results are the same whatever it measures', async () => {
    const file = await writeTinyStudy(tinyStudy({ space: LIMITED_SPACE, budget: { trials: 4, maxEpochs: 2 }, footprint: { maxWeights: 3000, maxRowMicroseconds: 1e6 } }));
    const outcomes = [];
    for (const threads of [1, 2]) {
      const out = path.join(path.dirname(file), `run-${threads}`);
      const { doc } = await runStudy(file, { out, threads });
      for (const trial of doc.trials) {
        // Measured by the thread that trained the trial (its job ran there), a positive, finite time.
        expect(trial.jobs[0]!.ranOn).toMatch(/^thread \d+$/);
        expect(Number.isFinite(trial.rowMicroseconds) && trial.rowMicroseconds! > 0).toBe(true);
      }
      outcomes.push(await studyOutcome(out));
    }
    // Configurations, curves, scores and ranking do not depend on the thread count nor on the measured times.
    expect(outcomes[1]).toEqual(outcomes[0]);
  });

  it('is asked for until a trial has a time, so a trial promoted to later rungs is timed once', async () => {
    const file = await writeTinyStudy(tinyStudy({ space: LIMITED_SPACE, budget: { trials: 9, maxEpochs: 9 }, sampler: { kind: 'successive-halving', eta: 3, minEpochs: 1, seed: 4 } }));
    const asked: { trialId: number; fromEpoch: number; timeRows: boolean; repeat: boolean }[] = [];
    const inner = new ClosedFormTransport({ rowMicroseconds: () => 1, evaluate: (c) => ({ validationLoss: 1 / c.width, metrics: { auc: 1 - 1 / (2 + c.width) } }) });
    const transport = { capacity: 1, addDataset: (d: Parameters<typeof inner.addDataset>[0]) => inner.addDataset(d), close: () => inner.close(), run: (job: Parameters<typeof inner.run>[0], onEpoch: Parameters<typeof inner.run>[1], signal: AbortSignal) => {
      asked.push({ trialId: job.trialId, fromEpoch: job.fromEpoch, timeRows: job.timeRows === true, repeat: job.repeat !== undefined });
      return inner.run(job, onEpoch, signal);
    } };
    const { doc } = await runStudy(file, { out: path.join(path.dirname(file), 'run'), transport: () => transport });
    // The search's first job of each trial asks; its later rungs and the repeat runs after the search do not.
    const search = asked.filter((a) => !a.repeat);
    expect(search.filter((a) => a.fromEpoch === 0).every((a) => a.timeRows)).toBe(true);
    expect(asked.filter((a) => a.repeat).every((a) => !a.timeRows)).toBe(true);
    const later = search.filter((a) => a.fromEpoch > 0);
    expect(later.length).toBeGreaterThan(0);
    expect(later.every((a) => !a.timeRows)).toBe(true);
    expect(doc.trials.every((t) => t.rowMicroseconds === 1)).toBe(true);
  });

  it('is not asked for when timing is off', async () => {
    const file = await writeTinyStudy(tinyStudy({ budget: { trials: 2, maxEpochs: 1 } }));
    const { doc } = await runStudy(file, { out: path.join(path.dirname(file), 'run'), threads: 1, timeRows: false });
    expect(doc.trials.length).toBe(2);
    expect(doc.trials.every((t) => t.rowMicroseconds === undefined)).toBe(true);
  });
});

describe('a weight limit sized by each configuration\'s own inputs', () => {
  const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
  const DEMO_CSV = path.join(ROOT, 'studies/demo/pump-logs.csv');
  const demo = JSON.parse(readFileSync(path.join(ROOT, 'studies/demo/study.json'), 'utf8')) as { data: StudyDefinitionInput['data'] };
  // Every demo category has fewer than 100,000 training rows, so this choice pools them all into one input per column.
  const POOL_ALL = 100_000;

  /** Model inputs counted by hand from the demo CSV's training rows: one per numeric column, one per category (or one per column when all are pooled). */
  async function handCountedInputs(trainRows: readonly number[]): Promise<{ plain: number; pooled: number }> {
    const table = await readCsv(DEMO_CSV);
    const features = Object.keys(table.rows[0]!).filter((column) => column !== demo.data.target);
    const categorical = features.filter((column) => table.rows.some((row) => row[column] !== '' && Number.isNaN(Number(row[column]))));
    const categories = categorical.map((column) => new Set(trainRows.map((r) => table.rows[r]![column]!).filter((value) => value !== '')).size);
    const numeric = features.length - categorical.length;
    return { plain: numeric + categories.reduce((a, b) => a + b, 0), pooled: numeric + categorical.length };
  }

  it('derives each choice\'s input count from its recipe, equal to the data set prepared for it', async () => {
    const { data } = await prepareData({ ...demo.data, csv: DEMO_CSV } as Parameters<typeof prepareData>[0], path.join(ROOT, 'studies/demo/study.json'), { choices: true });
    const hand = await handCountedInputs(data.rowIndices!.train);
    // Hand-worked from the CSV: 7 numeric columns, site_type with 4 categories and impeller_material with 3.
    expect(hand).toEqual({ plain: 14, pooled: 9 });
    for (const choice of [DEFAULT_PREPROCESSING, { numericInputs: 'normal-quantiles', poolCategoriesBelow: 500 }, { numericInputs: 'standardise', poolCategoriesBelow: POOL_ALL }] as const) {
      const prepared = await data.prepareChoice!(choice);
      expect(data.inputCountFor!(choice)).toBe(prepared.recipe.inputCount);
      expect(prepared.train.x.length).toBe(prepared.train.rows * prepared.recipe.inputCount);
    }
    expect(data.inputCountFor!({ numericInputs: 'standardise', poolCategoriesBelow: POOL_ALL })).toBe(hand.pooled);
    expect(data.inputCountFor!(DEFAULT_PREPROCESSING)).toBe(hand.plain);
  });

  it('cuts each configuration to the limit for the inputs of its own preprocessing choice', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-own-inputs-'));
    const file = path.join(dir, 'study.json');
    const definition: StudyDefinitionInput = {
      name: 'own-inputs',
      data: { ...demo.data, csv: DEMO_CSV },
      space: { depth: { min: 1, max: 1 }, width: { min: 4, max: 64, log: false }, activation: ['relu'], learningRate: { min: 0.001, max: 0.1 }, batchSize: [64], optimizer: ['adam'], poolCategoriesBelow: [0, POOL_ALL] },
      budget: { trials: 24, maxEpochs: 1 },
      sampler: { kind: 'random', seed: 3 },
      footprint: { maxWeights: 500 },
    };
    await writeFile(file, JSON.stringify(definition));
    const { doc } = await runStudy(file, { out: path.join(dir, 'run'), timeRows: false, transport: () => new ClosedFormTransport({ evaluate: (c) => ({ validationLoss: 1 / c.width }) }) });
    // Hand-worked, depth 1 and 1 output: (inputs + 2) x width + 1 weights; 500 allows width 31 at 14 inputs, 45 at 9.
    const inputsOf = (c: TrialConfiguration): number => (c.poolCategoriesBelow === POOL_ALL ? 9 : 14);
    for (const trial of doc.trials) {
      const { width } = trial.configuration;
      expect(trial.weightCount).toBe((inputsOf(trial.configuration) + 2) * width + 1);
      expect(width).toBeLessThanOrEqual(inputsOf(trial.configuration) === 14 ? 31 : 45);
    }
    // Some pooled configurations are wider than the default data set's 14 inputs would allow: sized by their own 9.
    expect(doc.trials.some((t) => t.configuration.poolCategoriesBelow === POOL_ALL && t.configuration.width > 31)).toBe(true);
    expect(doc.trials.some((t) => t.configuration.poolCategoriesBelow === 0 && t.configuration.width === 31)).toBe(true);
  });

  it('refuses a listed configuration by the inputs of its own choice', () => {
    const definition = studySchema.parse(tinyStudy({ space: { ...LIMITED_SPACE, poolCategoriesBelow: [0, 50] } }));
    const inputsOf = (choice: { poolCategoriesBelow: number }): number => (choice.poolCategoriesBelow === 50 ? 9 : 14);
    const listed = { depth: 1, width: 40, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0 } as const;
    // Hand-worked: depth 1, width 40: (9 + 2) x 40 + 1 = 441 weights pooled, (14 + 2) x 40 + 1 = 641 not.
    expect(() => checkFootprint({ ...definition, tryFirst: [{ ...listed, poolCategoriesBelow: 50 }], footprint: { maxWeights: 500 } }, { inputs: 14, outputs: 1 }, 'study.json', inputsOf)).not.toThrow();
    expect(() => checkFootprint({ ...definition, tryFirst: [{ ...listed, poolCategoriesBelow: 0 }], footprint: { maxWeights: 500 } }, { inputs: 14, outputs: 1 }, 'study.json', inputsOf)).toThrow(/tryFirst\[0\]: depth 1, width 40 has 641 weights/);
    // The smallest network (depth 1, width 4) must fit at the choice with the most inputs: (14 + 2) x 4 + 1 = 65.
    expect(() => checkFootprint({ ...definition, footprint: { maxWeights: 64 } }, { inputs: 14, outputs: 1 }, 'study.json', inputsOf)).toThrow(/14 inputs, 1 output: 65 weights/);
  });
});
