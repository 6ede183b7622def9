import { describe, expect, it } from 'vitest';
import { createSampler, plannedTrialCount } from '../src/samplers/index.js';
import { simulate, type SimulationLog } from '../src/samplers/simulate.js';
import type { Job } from '../src/samplers/sampler.js';
import { budgetSchema } from '../src/core/budget.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { spaceSchema } from '../src/space/schema.js';
import type { StudyDefinition } from '../src/study/definition.js';

type Definition = Pick<StudyDefinition, 'space' | 'budget' | 'sampler'>;
const definition = (sampler: object, trials = 27): Definition => ({
  space: spaceSchema.parse({
    depth: { min: 1, max: 3 },
    width: { min: 8, max: 128, log: true },
    activation: ['relu', 'tanh'],
    learningRate: { min: 1e-4, max: 1e-1 },
  }),
  budget: budgetSchema.parse({ trials, maxEpochs: 27 }),
  sampler: samplerSchema.parse(sampler),
});

/** A fake training curve: best near learning rate 1e-2; wide nets start slower but end lower, so rankings cross. */
const loss = (job: Job): number => {
  const { learningRate, width, depth } = job.configuration;
  return Math.abs(Math.log10(learningRate) + 2) + 0.1 * depth + (width / 128) * (3 / job.toEpoch) - width / 1280;
};
/** Durations that depend on the configuration, so several threads report in a different order than one. */
const duration = (job: Job): number => (job.toEpoch - job.fromEpoch) * (1 + job.configuration.width / 32);
const jobKey = (job: Job) => `${job.trialId}/${job.rung}/${job.fromEpoch}-${job.toEpoch}/b${job.bracket}`;
const best = (log: SimulationLog) => {
  const maxRung = Math.max(...log.outcomes.map((o) => o.rung));
  const top = log.outcomes.filter((o) => o.rung === maxRung).sort((a, b) => a.loss! - b.loss! || a.trialId - b.trialId);
  return top[0]!.trialId;
};

describe.each([
  ['successive halving', { kind: 'successive-halving', eta: 3, seed: 11 }],
  ['hyperband', { kind: 'hyperband', eta: 3, seed: 11 }],
  ['sobol', { kind: 'sobol', seed: 11 }],
  ['tpe', { kind: 'tpe', seed: 11, trialsBeforeModel: 8, batchSize: 3 }],
  ['tpe-hyperband', { kind: 'tpe-hyperband', eta: 3, seed: 11, smallestGroup: 2 }],
])('%s with 1 worker and with 3', (_name, sampler) => {
  const one = simulate(createSampler(definition(sampler)), { threads: 1, loss, duration });
  const three = simulate(createSampler(definition(sampler)), { threads: 3, loss, duration });

  it('receives results in a different order (so the comparison means something)', () => {
    expect(three.outcomes.map((o) => `${o.trialId}/${o.rung}`)).not.toEqual(one.outcomes.map((o) => `${o.trialId}/${o.rung}`));
  });

  it('hands out the same set of jobs with the same configurations', () => {
    expect(three.jobs.map(jobKey).sort()).toEqual(one.jobs.map(jobKey).sort());
    const params = (log: SimulationLog) => Object.fromEntries(log.jobs.map((j) => [j.trialId, j.configuration]));
    expect(params(three)).toEqual(params(one));
  });

  it('ends with the same top configuration', () => {
    expect(best(three)).toBe(best(one));
  });
});

describe('createSampler', () => {
  it('runs every planned configuration once at rung 0', () => {
    for (const sampler of [{ kind: 'random' }, { kind: 'successive-halving' }, { kind: 'hyperband' }, { kind: 'async-halving' }, { kind: 'sobol' }, { kind: 'tpe' }, { kind: 'tpe-hyperband' }]) {
      const log = simulate(createSampler(definition(sampler, 12)), { threads: 2, loss });
      expect(log.jobs.filter((j) => j.rung === 0)).toHaveLength(plannedTrialCount(definition(sampler, 12)));
    }
  });

  it('draws configurations from the sampler seed', () => {
    const first = (seed: number) => (createSampler(definition({ kind: 'random', seed })).next() as Job).configuration;
    expect(first(1)).toEqual(first(1));
    expect(first(1)).not.toEqual(first(2));
  });

  it('starts budget.trials Hyperband configurations: brackets cut below one pass, repeated above it', () => {
    // maxEpochs 27, eta 3: brackets of 27, 12, 6 and 4 configurations (derived from Algorithm 1), 49 a pass.
    expect(plannedTrialCount(definition({ kind: 'hyperband' }, 5))).toBe(5);
    expect(plannedTrialCount(definition({ kind: 'hyperband' }, 60))).toBe(60);
  });

  it('rejects a first rung longer than maxEpochs with a one-line user error naming both fields', () => {
    expect(() => createSampler(definition({ kind: 'async-halving', minEpochs: 30 }))).toThrow(
      /sampler\.minEpochs is 30 but budget\.maxEpochs is 27/,
    );
  });
});
