/**
 * The regularisers as search-space dimensions: drawn after every other field (so a space without
 * them draws as before), on a log scale by default, listed in tryFirst, and handled by the samplers
 * that work on the unit cube (Sobol, TPE) like any other dimension.
 */
import { describe, expect, it } from 'vitest';
import { budgetSchema } from '../src/core/budget.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { createSampler } from '../src/samplers/index.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { simulate } from '../src/samplers/simulate.js';
import { configurationAt, pointOfConfiguration, spaceDimensions } from '../src/space/dimensions.js';
import { configurationForTrial } from '../src/space/sample.js';
import { spaceSchema, type SearchSpace } from '../src/space/schema.js';
import { UserError } from '../src/core/errors.js';
import { regularisersInWords } from '../src/core/regularisers.js';
import { validateStudy } from '../src/study/load.js';

const plain = {
  depth: { min: 1, max: 3 },
  width: { min: 8, max: 64, log: true },
  activation: ['relu', 'tanh'],
  learningRate: { min: 1e-4, max: 1e-1 },
  batchSize: [32, 64],
  optimizer: ['sgd', 'adam'],
  dropout: { min: 0, max: 0.5 },
  schedule: { kind: ['constant', 'cosine'], warmupEpochs: { min: 0, max: 2 } },
};
const regularisers = { weightDecay: { min: 1e-6, max: 1e-2 }, maxGradientNorm: { min: 0.1, max: 10 }, labelSmoothing: { min: 0, max: 0.2 } };
const space = (extra: object = regularisers): SearchSpace => spaceSchema.parse({ ...plain, ...extra });

const withoutLabelSmoothing = ({ labelSmoothing: _s, ...rest }: TrialConfiguration): TrialConfiguration => rest;
const withoutRegularisers = ({ weightDecay: _d, maxGradientNorm: _n, labelSmoothing: _s, ...rest }: TrialConfiguration): TrialConfiguration => rest;

describe('regularisers in the search space', () => {
  it('leave every other field of every trial as a space without them draws it', () => {
    for (let trialId = 0; trialId < 50; trialId++) {
      const drawn = configurationForTrial(space(), 7, trialId);
      expect(withoutRegularisers(drawn)).toStrictEqual(configurationForTrial(space({}), 7, trialId));
      expect(drawn.weightDecay).toBeGreaterThanOrEqual(1e-6);
      expect(drawn.weightDecay).toBeLessThanOrEqual(1e-2);
      expect(drawn.maxGradientNorm).toBeGreaterThanOrEqual(0.1);
      expect(drawn.maxGradientNorm).toBeLessThanOrEqual(10);
      expect(drawn.labelSmoothing).toBeGreaterThanOrEqual(0);
      expect(drawn.labelSmoothing).toBeLessThanOrEqual(0.2);
    }
    // Adding a regulariser later leaves the draws of those before it where they were.
    const twoOnly = configurationForTrial(space({ weightDecay: regularisers.weightDecay, maxGradientNorm: regularisers.maxGradientNorm }), 7, 4);
    expect(twoOnly).toStrictEqual(withoutLabelSmoothing(configurationForTrial(space(), 7, 4)));
    expect(configurationForTrial(space({}), 7, 3)).not.toHaveProperty('weightDecay');
  });

  it('are dimensions after the schedule, on a log scale unless the range says otherwise', () => {
    const names = spaceDimensions(space()).map((d) => d.name);
    expect(names.slice(-3)).toEqual(['weightDecay', 'maxGradientNorm', 'labelSmoothing']);
    expect(spaceDimensions(space()).slice(-3).map((d) => d.kind === 'numeric' && d.log)).toEqual([true, true, false]);
    const linear = spaceDimensions(space({ weightDecay: { min: 0.001, max: 0.01, log: false } })).at(-1)!;
    expect(linear).toMatchObject({ name: 'weightDecay', log: false });
  });

  it('map to and from the unit cube: the centre of a log range is its geometric mean', () => {
    const dimensions = spaceDimensions(space());
    const centre = configurationAt(space(), dimensions.map(() => 0.5));
    // Common practice (no source): a log-uniform range's midpoint is sqrt(min * max).
    expect(centre.weightDecay).toBeCloseTo(1e-4, 12);
    expect(centre.maxGradientNorm).toBeCloseTo(1, 12);
    expect(centre.labelSmoothing).toBeCloseTo(0.1, 12);
    const drawn = configurationForTrial(space(), 3, 11);
    const back = configurationAt(space(), pointOfConfiguration(space(), drawn));
    expect(back.weightDecay).toBeCloseTo(drawn.weightDecay!, 12);
    expect(back.maxGradientNorm).toBeCloseTo(drawn.maxGradientNorm!, 12);
  });

  it('Sobol, unscrambled: the first point takes each range at its minimum, the second at its log centre', () => {
    // Source: REFERENCES.md, Sobol points (0, 0, ...), (0.5, 0.5, ...) (confirmed), mapped onto the ranges.
    const sampler = createSampler({ space: space(), budget: budgetSchema.parse({ trials: 4, maxEpochs: 2 }), sampler: samplerSchema.parse({ kind: 'sobol', scramble: 'none' }) });
    const first = sampler.next();
    const second = sampler.next();
    if (typeof first === 'string' || typeof second === 'string') throw new Error('the sampler handed out no job');
    expect(first.configuration.weightDecay).toBeCloseTo(1e-6, 15);
    expect(first.configuration.maxGradientNorm).toBeCloseTo(0.1, 12);
    expect(second.configuration.weightDecay).toBeCloseTo(1e-4, 12);
    expect(second.configuration.maxGradientNorm).toBeCloseTo(1, 12);
  });

  it('TPE models them: on a loss that only they decide, its proposals after the start-up design come closer to the best values', () => {
    const sampler = createSampler({ space: space(), budget: budgetSchema.parse({ trials: 40, maxEpochs: 1 }), sampler: samplerSchema.parse({ kind: 'tpe', seed: 5 }) });
    // A bowl in log coordinates, lowest at weight decay 1e-4 and norm 1 (an invented loss, for the sampler only).
    const distance = (c: TrialConfiguration): number => Math.abs(Math.log10(c.weightDecay! / 1e-4)) + Math.abs(Math.log10(c.maxGradientNorm!));
    const log = simulate(sampler, { threads: 1, loss: (job) => distance(job.configuration) });
    const distances = log.jobs.map((job) => distance(job.configuration));
    expect(distances).toHaveLength(40);
    const mean = (xs: number[]): number => xs.reduce((a, b) => a + b, 0) / xs.length;
    expect(mean(distances.slice(30))).toBeLessThan(mean(distances.slice(0, 10)) / 2);
  });

  it('a listed configuration must give each regulariser the space draws, and no other (one line naming the entry)', () => {
    const study = (spaceKeys: object, listed: object): unknown => ({
      name: 'pumps',
      data: { csv: 'pumps.csv', target: 'fails', task: 'binary' },
      space: { ...plain, ...spaceKeys },
      budget: { trials: 8, maxEpochs: 10 },
      tryFirst: [{ depth: 1, width: 8, activation: 'relu', learningRate: 0.01, batchSize: 32, schedule: 'constant', warmupEpochs: 0, minFactor: 0, ...listed }],
    });
    const messageOf = (raw: unknown): string => {
      try {
        validateStudy(raw, 'study.json');
      } catch (error) {
        if (error instanceof UserError) return error.message;
        throw error;
      }
      return 'accepted';
    };
    expect(messageOf(study(regularisers, { weightDecay: 1e-4 }))).toBe('study.json: tryFirst[0]: lacks maxGradientNorm, labelSmoothing, which this space draws; give them');
    expect(messageOf(study({}, { weightDecay: 1e-4 }))).toBe('study.json: tryFirst[0]: gives weightDecay but the space has no such range; leave them out or add the range to the space');
    expect(messageOf(study(regularisers, { weightDecay: 1e-4, maxGradientNorm: 1, labelSmoothing: 0.1 }))).toBe('accepted');
    const regression = { ...(study({ labelSmoothing: regularisers.labelSmoothing }, { labelSmoothing: 0.1 }) as object), data: { csv: 'flow.csv', target: 'flow', task: 'regression' } };
    expect(messageOf(regression)).toBe('study.json: space.labelSmoothing: is for classification; a regression task has no labels to smooth, leave it out');
  });

  it('are searched beside residual blocks too (the residual step applies all three)', () => {
    const result = spaceSchema.safeParse({ ...plain, ...regularisers, block: ['plain', 'residual'] });
    expect(result.success).toBe(true);
    expect(result.data?.block).toEqual(['plain', 'residual']);
    expect(result.data?.weightDecay).toEqual(spaceSchema.parse({ ...plain, ...regularisers }).weightDecay);
  });
});

describe('the regularisers in words, as the ranking and the report show them', () => {
  const base: TrialConfiguration = { depth: 1, width: 8, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0 };

  it('writes small values as powers of ten, as the L2 column does, and larger ones to three digits', () => {
    expect(regularisersInWords({ ...base, weightDecay: 6.8412e-6, labelSmoothing: 0.16321 })).toBe('weight decay 6.84e-6, label smoothing 0.163');
    expect(regularisersInWords({ ...base, weightDecay: 1e-4, maxGradientNorm: 1.5 })).toBe('weight decay 1e-4, gradient norm at most 1.5');
    expect(regularisersInWords({ ...base, weightDecay: 0.002, labelSmoothing: 0 })).toBe('weight decay 0.002, label smoothing 0');
    expect(regularisersInWords(base)).toBeUndefined();
  });
});
