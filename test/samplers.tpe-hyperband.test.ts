/**
 * TPE inside Hyperband: Hyperband's brackets, new configurations from a model on the largest budget
 * with enough results, a fixed share at random.
 * Source: Falkner, Klein, Hutter, "BOHB: Robust and Efficient Hyperparameter Optimization at Scale",
 * ICML 2018, Algorithm 2 (From memory: N_min = d + 1, a budget needs N_min + 2 results, rho = 1/3).
 */
import { describe, expect, it } from 'vitest';
import { stream } from '../src/random/streams.js';
import { decode } from '../src/space/dimensions.js';
import { createSampler, plannedBudget } from '../src/samplers/index.js';
import { replay } from '../src/samplers/replay.js';
import type { Job } from '../src/samplers/sampler.js';
import { simulate } from '../src/samplers/simulate.js';
import { TpeHyperbandSampler, tpeHyperbandPlugin } from '../src/samplers/tpe-hyperband.js';
import { budgetSchema } from '../src/core/budget.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { spaceSchema } from '../src/space/schema.js';
import { BRANIN, HARTMANN6, designOf, median, unevenDuration, type TestFunction } from './helpers/test-functions.js';

function create(fn: TestFunction, seed: number, options: object = {}, maxEpochs = 9): TpeHyperbandSampler {
  const settings = tpeHyperbandPlugin.schema.parse({ kind: 'tpe-hyperband', seed, ...options });
  return new TpeHyperbandSampler({
    maxEpochs,
    minEpochs: settings.minEpochs,
    eta: settings.eta,
    iterations: settings.iterations,
    design: designOf(fn),
    model: settings,
    randomShare: settings.randomShare,
    smallestGroup: settings.smallestGroup ?? fn.dimensions.length + 1,
    overlapBrackets: settings.overlapBrackets,
    stream: (purpose, trialId) => stream(seed, purpose, trialId),
  });
}

const firstJobs = (jobs: readonly Job[]) => jobs.filter((job) => job.rung === 0).sort((a, b) => a.trialId - b.trialId);
/** A loss that falls with the epochs trained, so short rungs rank roughly as long ones. */
const withEpochs = (fn: TestFunction, sampler: TpeHyperbandSampler) => (job: Job) =>
  fn.evaluate(decode(fn.dimensions, sampler.pointOf(job.trialId)!) as Record<string, number>) + 1 / job.toEpoch;

describe('tpe-hyperband proposals', () => {
  // maxEpochs 9, eta 3: brackets s = 2 (9 @ 1, 3 @ 3, 1 @ 9), s = 1 (5 @ 3, 1 @ 9), s = 0 (3 @ 9): 17 trials.
  it('draws the first two brackets at random and fits the third on bracket 0 at the largest budget with N_min + 2 results', () => {
    const sampler = create(BRANIN, 2, { randomShare: 0 });
    const log = simulate(sampler, { threads: 2, loss: withEpochs(BRANIN, sampler), duration: unevenDuration });
    const origins = firstJobs(log.jobs).map((job) => job.origin);
    expect(origins.slice(0, 14)).toEqual([...Array(9).fill({ method: 'random', batch: 0 }), ...Array(5).fill({ method: 'random', batch: 1 })]);
    // N_min = 2 dimensions + 1 = 3: a budget needs 5 results. Bracket 0 has 9 at 1 epoch, 3 at 3, 1 at 9.
    expect(origins.slice(14)).toEqual(Array(3).fill({ method: 'tpe', batch: 2, fittedOnEpochs: 1 }));
  });

  it('moves to a larger budget once it has enough results there (several passes)', () => {
    const sampler = create(BRANIN, 2, { randomShare: 0, iterations: 3 });
    const log = simulate(sampler, { threads: 2, loss: withEpochs(BRANIN, sampler) });
    const budgets = firstJobs(log.jobs).map((job) => job.origin?.fittedOnEpochs).filter((e) => e !== undefined);
    expect(Math.max(...budgets)).toBe(9);
  });

  it('draws about a third at random by default, and all of them with randomShare 1', () => {
    const sampler = create(HARTMANN6, 5, { iterations: 4 });
    const log = simulate(sampler, { threads: 2, loss: withEpochs(HARTMANN6, sampler) });
    const later = firstJobs(log.jobs).filter((job) => job.origin!.batch! >= 2);
    const share = later.filter((job) => job.origin!.method === 'random').length / later.length;
    // 4 passes of 17 trials, 66 from bracket 2 on: 1/3 random, +- 3 binomial standard errors (0.058 each).
    expect(share).toBeGreaterThan(1 / 3 - 0.18);
    expect(share).toBeLessThan(1 / 3 + 0.18);
    const allRandom = create(HARTMANN6, 5, { iterations: 4, randomShare: 1 });
    const randomLog = simulate(allRandom, { threads: 2, loss: withEpochs(HARTMANN6, allRandom) });
    expect(firstJobs(randomLog.jobs).every((job) => job.origin!.method === 'random')).toBe(true);
  });

  it('without overlap, starts a bracket only when the earlier ones have finished, and fits on all of them', () => {
    const sampler = create(BRANIN, 2, { randomShare: 0, overlapBrackets: false });
    for (let i = 0; i < 9; i++) sampler.next();
    expect(sampler.next()).toBe('wait');
    const log = simulate(create(BRANIN, 2, { randomShare: 0, overlapBrackets: false }), { threads: 2, loss: (job) => job.trialId / 10 });
    expect(firstJobs(log.jobs).slice(9, 14).map((job) => job.origin)).toEqual(Array(5).fill({ method: 'tpe', batch: 1, fittedOnEpochs: 1 }));
  });
});

describe('tpe-hyperband determinism', () => {
  const trialsOf = (threads: number) => {
    const sampler = create(HARTMANN6, 7, { iterations: 2 });
    const log = simulate(sampler, { threads, loss: withEpochs(HARTMANN6, sampler), duration: unevenDuration });
    return {
      order: log.outcomes.map((o) => `${o.trialId}/${o.rung}`),
      jobs: log.jobs.map((job) => JSON.stringify([job.trialId, job.rung, job.fromEpoch, job.toEpoch, job.origin, sampler.pointOf(job.trialId)])).sort(),
    };
  };

  it('hands out the same jobs and configurations with 1 worker and with 4', () => {
    const one = trialsOf(1);
    const four = trialsOf(4);
    expect(four.order).not.toEqual(one.order);
    expect(four.jobs).toEqual(one.jobs);
  });

  it('in a study, resumed from recorded outcomes at any point, runs the same jobs as an uninterrupted run', () => {
    const definition = {
      space: spaceSchema.parse({ depth: { min: 1, max: 3 }, width: { min: 8, max: 64 }, activation: ['relu', 'tanh'], learningRate: { min: 1e-4, max: 1e-1 } }),
      budget: budgetSchema.parse({ trials: 34, maxEpochs: 9 }),
      sampler: samplerSchema.parse({ kind: 'tpe-hyperband', seed: 3, iterations: 2, smallestGroup: 2 }),
    };
    const loss = (job: Job) => Math.abs(Math.log10(job.configuration.learningRate) + 2) + job.configuration.width / (100 * job.toEpoch);
    const key = (job: Job) => JSON.stringify([job.trialId, job.rung, job.fromEpoch, job.toEpoch, job.configuration, job.origin ?? null]);
    const whole = simulate(createSampler(definition), { threads: 3, loss, duration: unevenDuration });
    expect(whole.jobs.filter((job) => job.rung === 0)).toHaveLength(plannedBudget(definition).trials);
    expect(whole.jobs.some((job) => job.origin?.method === 'tpe')).toBe(true);
    for (const reports of [3, 12, 20, 30]) {
      const crashed = simulate(createSampler(definition), { threads: 3, loss, duration: unevenDuration, stopAfterReports: reports });
      const resumed = createSampler(definition);
      const { pending, unused } = replay(resumed, crashed.outcomes);
      expect(unused).toEqual([]);
      const rest = simulate(resumed, { threads: 3, loss, duration: unevenDuration, running: pending });
      const done = new Set(crashed.outcomes.map((o) => `${o.trialId}/${o.rung}`));
      const ran = [...crashed.jobs.filter((job) => done.has(`${job.trialId}/${job.rung}`)), ...pending, ...rest.jobs];
      expect(ran.map(key).sort()).toEqual(whole.jobs.map(key).sort());
    }
  });
});

describe('tpe-hyperband against Hyperband with random configurations', () => {
  it('over 20 seeds on Hartmann 6-D, three passes, its median gap to the minimum at maxEpochs is under 0.9 of Hyperband\'s', () => {
    // Same brackets; randomShare 1 makes every configuration random, i.e. Hyperband itself.
    // The loss at 27 epochs is f(x) + 1/27, so the best possible is -3.32237 + 1/27 (REFERENCES.md for the minimum).
    const floor = HARTMANN6.minimum + 1 / 27;
    const bestAtTop = (options: object, seed: number) => {
      const sampler = create(HARTMANN6, seed, { iterations: 3, ...options }, 27);
      const log = simulate(sampler, { threads: 2, loss: withEpochs(HARTMANN6, sampler) });
      const full = new Set(log.jobs.filter((job) => job.toEpoch === 27).map((job) => `${job.trialId}/${job.rung}`));
      return Math.min(...log.outcomes.filter((o) => full.has(`${o.trialId}/${o.rung}`)).map((o) => o.loss!));
    };
    const seeds = Array.from({ length: 20 }, (_, seed) => seed);
    const modelGap = median(seeds.map((seed) => bestAtTop({}, seed))) - floor;
    const randomGap = median(seeds.map((seed) => bestAtTop({ randomShare: 1 }, seed))) - floor;
    // Measured: 0.83 against 1.09 (ratio 0.76); deterministic given the seeds.
    expect(modelGap).toBeLessThan(0.9 * randomGap);
  });
});
