import { describe, expect, it } from 'vitest';
import { HyperbandSampler, hyperbandSchedule, largestBracket, scheduledEpochs } from '../src/samplers/hyperband.js';
import { trainedEpochs } from '../src/samplers/plan.js';
import { simulate } from '../src/samplers/simulate.js';
import type { Job } from '../src/samplers/sampler.js';
import type { TrialConfiguration } from '../src/core/configuration.js';

const configurationFor = (trialId: number): TrialConfiguration => ({
  depth: 1, width: 8 + trialId, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0,
});
const pairs = (maxEpochs: number, eta: number, minEpochs = 1) =>
  hyperbandSchedule(maxEpochs, eta, minEpochs).map((b) => b.rounds.map((r) => [r.configurations, r.epochs]));

describe('hyperbandSchedule', () => {
  it('matches Algorithm 1 for R = 81, eta = 3', () => {
    // Source: Li et al., Hyperband, JMLR 18(185), 2018, Algorithm 1 (values derived, see REFERENCES.md)
    expect(pairs(81, 3)).toEqual([
      [[81, 1], [27, 3], [9, 9], [3, 27], [1, 81]],
      [[34, 3], [11, 9], [3, 27], [1, 81]],
      [[15, 9], [5, 27], [1, 81]],
      [[8, 27], [2, 81]],
      [[5, 81]],
    ]);
    expect(hyperbandSchedule(81, 3).map((b) => b.s)).toEqual([4, 3, 2, 1, 0]);
  });

  it('totals 143 configurations and 405, 363, 351, 378, 405 epochs per bracket for R = 81, eta = 3', () => {
    // Source: Li et al., Hyperband, JMLR 18(185), 2018, Algorithm 1 (values derived, see REFERENCES.md)
    const brackets = hyperbandSchedule(81, 3);
    expect(brackets.reduce((sum, b) => sum + b.rounds[0]!.configurations, 0)).toBe(143);
    expect(brackets.map((b) => scheduledEpochs(b.rounds))).toEqual([405, 363, 351, 378, 405]);
  });

  it('trains fewer epochs than scheduled because promoted trials continue from their checkpoint', () => {
    // Bracket s = 4: 81*1 + 27*(3-1) + 9*(9-3) + 3*(27-9) + 1*(81-27).
    expect(trainedEpochs(hyperbandSchedule(81, 3)[0]!.rounds)).toBe(81 + 54 + 54 + 54 + 54);
  });

  it('finds s_max with integers where a floating logarithm falls one short', () => {
    // Math.log(1000) / Math.log(10) is 2.9999999999999996 (REFERENCES.md, floating-point trap).
    expect(Math.floor(Math.log(1000) / Math.log(10))).toBe(2);
    expect(largestBracket(1000, 1, 10)).toBe(3);
    expect(hyperbandSchedule(1000, 10)).toHaveLength(4);
  });

  it('measures rounds in units of minEpochs', () => {
    // R = 27 units of 2 epochs: the same shape as R = 27, epochs doubled.
    expect(pairs(54, 3, 2)).toEqual(pairs(27, 3).map((b) => b.map(([n, e]) => [n, e! * 2])));
  });

  it('rounds fractional rounds to the nearest epoch, always rising and ending at maxEpochs', () => {
    // R = 100 epochs, eta = 3: s_max = 4, r = 100/81 = 1.23 -> 1, 3.70 -> 4, 11.1 -> 11, 33.3 -> 33, 100.
    expect(pairs(100, 3)[0]).toEqual([[81, 1], [27, 4], [9, 11], [3, 33], [1, 100]]);
    for (const bracket of hyperbandSchedule(100, 3)) {
      const epochs = bracket.rounds.map((r) => r.epochs);
      expect(epochs.at(-1)).toBe(100);
      for (let i = 1; i < epochs.length; i++) expect(epochs[i]!).toBeGreaterThan(epochs[i - 1]!);
    }
  });

  it('is one bracket of full-length trials when minEpochs * eta exceeds maxEpochs', () => {
    expect(pairs(5, 3, 2)).toEqual([[[1, 5]]]);
  });
});

describe('hyperband sampler', () => {
  // R = 9, eta = 3: brackets s=2 (9@1, 3@3, 1@9), s=1 (5@3, 1@9), s=0 (3@9). 17 configurations.
  const create = (overlapBrackets?: boolean) =>
    new HyperbandSampler({ maxEpochs: 9, minEpochs: 1, eta: 3, configurationFor, ...(overlapBrackets === undefined ? {} : { overlapBrackets }) });

  it('numbers trials across brackets and tags jobs with the bracket s', () => {
    const log = simulate(create(), { threads: 1, loss: (job) => job.trialId / 100 });
    const firstJobs = new Map<number, Job>();
    for (const job of log.jobs) if (!firstJobs.has(job.trialId)) firstJobs.set(job.trialId, job);
    expect([...firstJobs.keys()]).toEqual([...Array(17).keys()]);
    expect([...firstJobs.values()].map((j) => j.bracket)).toEqual([...Array(9).fill(2), ...Array(5).fill(1), ...Array(3).fill(0)]);
    expect([...firstJobs.values()].map((j) => j.toEpoch)).toEqual([...Array(9).fill(1), ...Array(5).fill(3), ...Array(3).fill(9)]);
  });

  it('runs the planned rounds: with losses rising with the id, the lowest ids go on', () => {
    const log = simulate(create(), { threads: 1, loss: (job) => job.trialId / 100 });
    const promoted = log.jobs.filter((j) => j.rung > 0).map((j) => [j.bracket, j.trialId, j.rung, j.fromEpoch, j.toEpoch]);
    expect(promoted).toEqual([
      [2, 0, 1, 1, 3], [2, 1, 1, 1, 3], [2, 2, 1, 1, 3],
      [2, 0, 2, 3, 9],
      [1, 9, 1, 3, 9],
    ]);
  });

  it('starts the next bracket while the current one waits, unless told not to', () => {
    const overlapping = create();
    for (let i = 0; i < 9; i++) overlapping.next();
    expect((overlapping.next() as Job).bracket).toBe(1);
    const sequential = create(false);
    for (let i = 0; i < 9; i++) sequential.next();
    expect(sequential.next()).toBe('wait');
  });

  it('hands out the same jobs with 1 worker and with 4', () => {
    const loss = (job: Job) => ((job.trialId * 7) % 11) / (job.toEpoch + 1);
    const key = (j: Job) => `${j.trialId}/${j.rung}/${j.fromEpoch}/${j.toEpoch}/${j.bracket}`;
    const one = simulate(create(), { threads: 1, loss }).jobs.map(key).sort();
    const four = simulate(create(), { threads: 4, loss, duration: (j) => (j.trialId % 3) + j.toEpoch }).jobs.map(key).sort();
    expect(four).toEqual(one);
  });

  it('repeats the brackets for several passes, trial ids running on', () => {
    const twice = new HyperbandSampler({ maxEpochs: 9, minEpochs: 1, eta: 3, configurationFor, iterations: 2 });
    const log = simulate(twice, { threads: 2, loss: (job) => job.trialId / 100 });
    const started = log.jobs.filter((j) => j.rung === 0);
    expect(started.map((j) => j.trialId).sort((a, b) => a - b)).toEqual([...Array(34).keys()]);
    expect(started.filter((j) => j.trialId >= 17).map((j) => j.bracket)).toEqual([...Array(9).fill(2), ...Array(5).fill(1), ...Array(3).fill(0)]);
  });

  it('holds a bracket, and every later one, while mayStartBracket says no, and records the injected origin', () => {
    let open = false;
    const held = new HyperbandSampler({
      maxEpochs: 9, minEpochs: 1, eta: 3, configurationFor,
      mayStartBracket: (index) => index === 0 || open,
      originFor: (trialId) => ({ method: 'test', batch: trialId }),
    });
    const first = Array.from({ length: 9 }, () => held.next() as Job);
    expect(first.map((j) => j.origin)).toEqual([...Array(9).keys()].map((id) => ({ method: 'test', batch: id })));
    expect(held.next()).toBe('wait');
    open = true;
    expect((held.next() as Job).bracket).toBe(1);
  });
});
