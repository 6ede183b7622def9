import { describe, expect, it } from 'vitest';
import { createSampler } from '../src/samplers/index.js';
import type { Job } from '../src/samplers/sampler.js';
import { budgetSchema } from '../src/core/budget.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { spaceSchema } from '../src/space/schema.js';

const definition = (sampler: object) => ({
  space: spaceSchema.parse({
    depth: { min: 1, max: 4 },
    width: { min: 8, max: 128, log: true },
    activation: ['relu', 'tanh'],
    learningRate: { min: 1e-4, max: 1e-2 },
    batchSize: [32, 64],
  }),
  budget: budgetSchema.parse({ trials: 16, maxEpochs: 5 }),
  sampler: samplerSchema.parse(sampler),
});
function drain(sampler: object): Job[] {
  const s = createSampler(definition(sampler));
  const jobs: Job[] = [];
  for (let job = s.next(); typeof job !== 'string'; job = s.next()) jobs.push(job);
  return jobs;
}

describe('sobol sampler', () => {
  it('unscrambled, starts at the lowest corner and then the centre of the space', () => {
    // Source: REFERENCES.md, Sobol points (0, 0, ...), (0.5, 0.5, ...) (confirmed), mapped onto the ranges.
    const [first, second] = drain({ kind: 'sobol', scramble: 'none' });
    expect(first!.configuration).toMatchObject({ depth: 1, width: 8, activation: 'relu', batchSize: 32, optimizer: 'adam' });
    expect(first!.configuration.learningRate).toBeCloseTo(1e-4, 15);
    // 0.5 on [1, 4] is depth 3 (cells of 1/4); log width [8, 129): 8 * (129 / 8)^0.5 = 32.1 -> 32; learning rate 1e-3.
    expect(second!.configuration).toMatchObject({ depth: 3, width: 32, activation: 'tanh', batchSize: 64 });
    expect(second!.configuration.learningRate).toBeCloseTo(1e-3, 12);
  });

  it('spreads each integer and category evenly: 16 points give each depth 4 times', () => {
    const jobs = drain({ kind: 'sobol', seed: 9 });
    const counts = [1, 2, 3, 4].map((depth) => jobs.filter((job) => job.configuration.depth === depth).length);
    expect(counts).toEqual([4, 4, 4, 4]);
    expect(jobs.filter((job) => job.configuration.activation === 'relu')).toHaveLength(8);
  });

  it('trains each trial once to maxEpochs, records the design, and differs by seed', () => {
    const jobs = drain({ kind: 'sobol', seed: 1 });
    expect(jobs).toHaveLength(16);
    expect(jobs.every((job) => job.toEpoch === 5 && job.origin?.method === 'sobol')).toBe(true);
    expect(drain({ kind: 'sobol', seed: 1 }).map((j) => j.configuration)).toEqual(jobs.map((j) => j.configuration));
    expect(drain({ kind: 'sobol', seed: 2 }).map((j) => j.configuration)).not.toEqual(jobs.map((j) => j.configuration));
  });
});
