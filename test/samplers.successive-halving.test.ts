import { describe, expect, it } from 'vitest';
import { SuccessiveHalvingSampler, halvingSchedule } from '../src/samplers/successive-halving.js';
import type { Job, Sampler } from '../src/samplers/sampler.js';
import type { TrialConfiguration } from '../src/core/configuration.js';

const configurationFor = (trialId: number): TrialConfiguration => ({
  depth: 1, width: 8 + trialId, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0,
});

/** Ask for jobs until the sampler stops handing them out; returns (trial, rung, from, to) tuples. */
function drain(sampler: Sampler): { jobs: [number, number, number, number][]; stop: 'wait' | 'done' } {
  const jobs: [number, number, number, number][] = [];
  for (;;) {
    const job = sampler.next();
    if (job === 'wait' || job === 'done') return { jobs, stop: job };
    jobs.push([job.trialId, job.rung, job.fromEpoch, job.toEpoch]);
  }
}

describe('halvingSchedule', () => {
  it('keeps floor(n / eta) per rung and multiplies epochs by eta up to R', () => {
    // Source: Jamieson, Talwalkar, AISTATS 2016, with eta in place of 2 (values derived)
    expect(halvingSchedule(27, 1, 81, 3)).toEqual([
      { configurations: 27, epochs: 1 },
      { configurations: 9, epochs: 3 },
      { configurations: 3, epochs: 9 },
      { configurations: 1, epochs: 27 },
      { configurations: 1, epochs: 81 },
    ]);
  });

  it('caps the last rung at R even when it is less than a factor eta above the previous one', () => {
    expect(halvingSchedule(8, 2, 20, 2)).toEqual([
      { configurations: 8, epochs: 2 },
      { configurations: 4, epochs: 4 },
      { configurations: 2, epochs: 8 },
      { configurations: 1, epochs: 16 },
      { configurations: 1, epochs: 20 },
    ]);
  });

  it('is a single rung when the first rung already reaches R', () => {
    expect(halvingSchedule(5, 10, 10, 3)).toEqual([{ configurations: 5, epochs: 10 }]);
  });
});

describe('successive halving sampler', () => {
  // 9 configurations, rungs at 1, 3 and 9 epochs.
  const create = () => new SuccessiveHalvingSampler({ trials: 9, minEpochs: 1, maxEpochs: 9, eta: 3, configurationFor });
  const rung0Losses = [0.9, 0.1, 0.5, 0.3, 0.3, 0.8, 0.2, 0.7, 0.6];

  it('hands out all of rung 0, then waits until every result is in', () => {
    const sampler = create();
    const first = drain(sampler);
    expect(first.jobs).toEqual(rung0Losses.map((_, id) => [id, 0, 0, 1]));
    expect(first.stop).toBe('wait');
    for (let id = 0; id < 8; id++) sampler.report({ trialId: id, rung: 0, loss: rung0Losses[id]! });
    expect(sampler.next()).toBe('wait');
  });

  it('promotes the best third of rung 0, ties to the lower id, best first, continuing from epoch 1', () => {
    const sampler = create();
    drain(sampler);
    rung0Losses.forEach((loss, id) => sampler.report({ trialId: id, rung: 0, loss }));
    // Trials 3 and 4 tie at 0.3: the lower id goes on.
    expect(drain(sampler)).toEqual({ jobs: [[1, 1, 1, 3], [6, 1, 1, 3], [3, 1, 1, 3]], stop: 'wait' });
    sampler.report({ trialId: 1, rung: 1, loss: 0.15 });
    sampler.report({ trialId: 6, rung: 1, loss: 0.05 });
    sampler.report({ trialId: 3, rung: 1, loss: 0.2 });
    expect(drain(sampler)).toEqual({ jobs: [[6, 2, 3, 9]], stop: 'wait' });
    sampler.report({ trialId: 6, rung: 2, loss: 0.01 });
    expect(sampler.next()).toBe('done');
  });

  it('makes the same promotions whatever order the results arrive in', () => {
    const forward = create();
    const backward = create();
    drain(forward);
    drain(backward);
    rung0Losses.forEach((loss, id) => forward.report({ trialId: id, rung: 0, loss }));
    [...rung0Losses.entries()].reverse().forEach(([id, loss]) => backward.report({ trialId: id, rung: 0, loss }));
    expect(drain(backward)).toEqual(drain(forward));
  });

  it('keeps checkpoints of trials still in the race and drops the eliminated', () => {
    const sampler = create();
    drain(sampler);
    rung0Losses.forEach((loss, id) => sampler.report({ trialId: id, rung: 0, loss }));
    expect([0, 1, 2, 3, 4, 5, 6, 7, 8].filter((id) => sampler.mayContinue(id))).toEqual([1, 3, 6]);
  });

  it('never promotes a diverged trial, and ends early when every trial diverged', () => {
    const sampler = new SuccessiveHalvingSampler({ trials: 3, minEpochs: 1, maxEpochs: 3, eta: 3, configurationFor });
    drain(sampler);
    sampler.report({ trialId: 0, rung: 0, loss: null });
    expect(sampler.mayContinue(0)).toBe(false);
    sampler.report({ trialId: 1, rung: 0, loss: null });
    sampler.report({ trialId: 2, rung: 0, loss: null });
    expect(sampler.next()).toBe('done');
  });

  it('ranks a diverged trial below every finite loss', () => {
    const sampler = new SuccessiveHalvingSampler({ trials: 3, minEpochs: 1, maxEpochs: 3, eta: 3, configurationFor });
    drain(sampler);
    sampler.report({ trialId: 0, rung: 0, loss: null });
    sampler.report({ trialId: 1, rung: 0, loss: 5 });
    sampler.report({ trialId: 2, rung: 0, loss: 7 });
    expect((sampler.next() as Job).trialId).toBe(1);
  });

  it('rejects an outcome for a rung the trial is not running', () => {
    const sampler = create();
    drain(sampler);
    expect(() => sampler.report({ trialId: 0, rung: 1, loss: 0.1 })).toThrow(/no outstanding job for trial 0 at rung 1/);
  });
});
