import { describe, expect, it } from 'vitest';
import { createSampler } from '../src/samplers/index.js';
import { simulate, type SimulationLog } from '../src/samplers/simulate.js';
import type { Job } from '../src/samplers/sampler.js';
import { budgetSchema } from '../src/core/budget.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { spaceSchema } from '../src/space/schema.js';
import type { TrialConfiguration } from '../src/core/configuration.js';

const space = spaceSchema.parse({
  depth: { min: 1, max: 3 },
  width: { min: 8, max: 128, log: true },
  activation: ['relu', 'tanh'],
  learningRate: { min: 1e-4, max: 1e-1 },
});
const listed: TrialConfiguration[] = [
  { depth: 2, width: 100, activation: 'tanh', learningRate: 0.0123, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0 },
  // Outside the space on purpose: a listed configuration is trained as written.
  { depth: 5, width: 256, activation: 'relu', learningRate: 0.001, batchSize: 64, optimizer: 'adam', l2: 0, dropout: 0.15 },
];
const definition = (sampler: object, tryFirst?: TrialConfiguration[]) => ({
  space,
  budget: budgetSchema.parse({ trials: 12, maxEpochs: 9 }),
  sampler: samplerSchema.parse(sampler),
  ...(tryFirst ? { tryFirst } : {}),
});
// A fake curve, best near learning rate 1e-2, so model-based samplers have something to learn.
const loss = (job: Job): number => Math.abs(Math.log10(job.configuration.learningRate) + 2) + 0.1 * job.configuration.depth + 1 / job.toEpoch;
const duration = (job: Job): number => (job.toEpoch - job.fromEpoch) * (1 + job.configuration.width / 32);
const byTrial = (log: SimulationLog) => new Map(log.jobs.map((job) => [job.trialId, job.configuration]));

describe.each([
  ['random', { kind: 'random', seed: 4 }],
  ['successive halving', { kind: 'successive-halving', eta: 3, seed: 4 }],
  ['hyperband', { kind: 'hyperband', eta: 3, seed: 4 }],
  ['asynchronous halving', { kind: 'async-halving', eta: 3, seed: 4 }],
  ['sobol', { kind: 'sobol', seed: 4 }],
  ['tpe', { kind: 'tpe', seed: 4, trialsBeforeModel: 4, batchSize: 2 }],
  ['tpe-hyperband', { kind: 'tpe-hyperband', eta: 3, seed: 4, smallestGroup: 2 }],
])('tryFirst with %s', (_name, sampler) => {
  const withList = simulate(createSampler(definition(sampler, listed)), { threads: 1, loss, duration });

  it('gives trials 0 and 1 exactly the listed configurations', () => {
    const configurations = byTrial(withList);
    expect(configurations.get(0)).toEqual(listed[0]);
    expect(configurations.get(1)).toEqual(listed[1]);
  });

  it('hands out the same jobs with 1 worker and with 3', () => {
    const three = simulate(createSampler(definition(sampler, listed)), { threads: 3, loss, duration });
    expect(Object.fromEntries(byTrial(three))).toEqual(Object.fromEntries(byTrial(withList)));
  });
});

describe('tryFirst with random search', () => {
  it('leaves every trial after the list as it was drawn without the list', () => {
    const plain = byTrial(simulate(createSampler(definition({ kind: 'random', seed: 4 })), { threads: 1, loss, duration }));
    const withList = byTrial(simulate(createSampler(definition({ kind: 'random', seed: 4 }, listed)), { threads: 1, loss, duration }));
    for (let id = 2; id < 12; id++) expect(withList.get(id)).toEqual(plain.get(id));
    expect(withList.get(0)).not.toEqual(plain.get(0));
  });
});
