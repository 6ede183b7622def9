// Source: Li et al., MLSys 2020, Algorithm 2 (promotion rule); sequences below are hand-worked.
import { describe, expect, it } from 'vitest';
import { AsyncHalvingSampler } from '../src/samplers/async-halving.js';
import type { Job } from '../src/samplers/sampler.js';
import type { TrialConfiguration } from '../src/core/configuration.js';

const configurationFor = (trialId: number): TrialConfiguration => ({
  depth: 1, width: 8 + trialId, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0,
});
const create = (trials: number, maxEpochs = 9) => new AsyncHalvingSampler({ trials, minEpochs: 1, maxEpochs, eta: 3, configurationFor });
const job = (answer: Job | 'wait' | 'done') => {
  if (typeof answer === 'string') throw new Error(`expected a job, got ${answer}`);
  return [answer.trialId, answer.rung, answer.fromEpoch, answer.toEpoch];
};
/** Start `count` new configurations and report their rung-0 losses. */
function startAndReport(sampler: AsyncHalvingSampler, losses: (number | null)[]): void {
  for (let i = 0; i < losses.length; i++) sampler.next();
  losses.forEach((loss, trialId) => sampler.report({ trialId, rung: 0, loss }));
}

describe('async halving sampler', () => {
  it('places rungs at minEpochs * eta^k with maxEpochs on top', () => {
    // Source: Li et al., MLSys 2020: resource at rung k is r * eta^(s + k); r = 1, eta = 3, s = 0, R = 81 (derived)
    expect(new AsyncHalvingSampler({ trials: 1, minEpochs: 1, maxEpochs: 81, eta: 3, configurationFor }).rungs).toEqual([1, 3, 9, 27, 81]);
    expect(new AsyncHalvingSampler({ trials: 1, minEpochs: 2, maxEpochs: 30, eta: 3, configurationFor }).rungs).toEqual([2, 6, 18, 30]);
  });

  it('after 3 results at rung 0 with losses (0.5, 0.2, 0.9) promotes the trial with 0.2', () => {
    const sampler = create(10);
    startAndReport(sampler, [0.5, 0.2, 0.9]);
    const promotion = sampler.next() as Job;
    expect(job(promotion)).toEqual([1, 1, 1, 3]);
    expect(promotion.reason).toBe('rank 1 of 3 at rung 0 (top 1 promotable)');
    expect(sampler.promotionReason(1, 0)).toBe('rank 1 of 3 at rung 0 (top 1 promotable)');
  });

  it('after only 2 results starts a new configuration instead of waiting for the rung to fill', () => {
    const sampler = create(10);
    sampler.next();
    sampler.next();
    sampler.next();
    sampler.report({ trialId: 0, rung: 0, loss: 0.5 });
    sampler.report({ trialId: 1, rung: 0, loss: 0.2 });
    expect(job(sampler.next())).toEqual([3, 0, 0, 1]);
  });

  it('does not promote a trial twice', () => {
    const sampler = create(10);
    startAndReport(sampler, [0.5, 0.2, 0.9]);
    expect(job(sampler.next())).toEqual([1, 1, 1, 3]);
    expect(job(sampler.next())).toEqual([3, 0, 0, 1]);
  });

  it('with 6 results makes the top 2 candidates, and only them', () => {
    const sampler = create(10);
    startAndReport(sampler, [0.6, 0.1, 0.5, 0.3, 0.9, 0.2]);
    expect(job(sampler.next())).toEqual([1, 1, 1, 3]);
    const second = sampler.next() as Job;
    expect(job(second)).toEqual([5, 1, 1, 3]);
    expect(second.reason).toBe('rank 2 of 6 at rung 0 (top 2 promotable)');
    // Trial 3 (rank 3) is not a candidate: a new configuration starts.
    expect(job(sampler.next())).toEqual([6, 0, 0, 1]);
  });

  it('breaks ties by the lower trial id', () => {
    const sampler = create(10);
    startAndReport(sampler, [0.4, 0.3, 0.3]);
    expect(job(sampler.next())).toEqual([1, 1, 1, 3]);
  });

  it('scans from the highest rung down: a rung-1 candidate goes before a rung-0 one', () => {
    const sampler = create(12);
    for (let i = 0; i < 12; i++) sampler.next();
    [0.9, 0.8, 0.7, 0.6, 0.5, 0.4, 0.3, 0.2, 0.1].forEach((loss, trialId) => sampler.report({ trialId, rung: 0, loss }));
    expect([sampler.next(), sampler.next(), sampler.next()].map(job)).toEqual([[8, 1, 1, 3], [7, 1, 1, 3], [6, 1, 1, 3]]);
    sampler.report({ trialId: 8, rung: 1, loss: 0.3 });
    sampler.report({ trialId: 7, rung: 1, loss: 0.1 });
    sampler.report({ trialId: 6, rung: 1, loss: 0.2 });
    // Trial 9 now leads rung 0 (4 candidates of 12 results), but rung 1 is scanned first.
    [0.01, 0.95, 0.96].forEach((loss, i) => sampler.report({ trialId: 9 + i, rung: 0, loss }));
    const top = sampler.next() as Job;
    expect(job(top)).toEqual([7, 2, 3, 9]);
    expect(top.reason).toBe('rank 1 of 3 at rung 1 (top 1 promotable)');
    expect(job(sampler.next())).toEqual([9, 1, 1, 3]);
  });

  it('never promotes out of the top rung, and is done when nothing is outstanding or promotable', () => {
    const sampler = create(9, 3); // rungs 1 and 3
    startAndReport(sampler, [0.9, 0.8, 0.7, 0.6, 0.5, 0.4, 0.3, 0.2, 0.1]);
    expect([sampler.next(), sampler.next(), sampler.next()].map(job)).toEqual([[8, 1, 1, 3], [7, 1, 1, 3], [6, 1, 1, 3]]);
    expect(sampler.next()).toBe('wait');
    [8, 7, 6].forEach((trialId) => sampler.report({ trialId, rung: 1, loss: 0.05 }));
    expect(sampler.next()).toBe('done');
    expect([6, 7, 8].map((id) => sampler.mayContinue(id))).toEqual([false, false, false]);
  });

  it('waits while jobs are outstanding and all configurations have started', () => {
    const sampler = create(3);
    sampler.next();
    sampler.next();
    sampler.next();
    expect(sampler.next()).toBe('wait');
    sampler.report({ trialId: 0, rung: 0, loss: 0.5 });
    sampler.report({ trialId: 1, rung: 0, loss: 0.2 });
    expect(sampler.next()).toBe('wait');
    sampler.report({ trialId: 2, rung: 0, loss: 0.9 });
    expect(job(sampler.next())).toEqual([1, 1, 1, 3]);
    sampler.report({ trialId: 1, rung: 1, loss: 0.1 });
    expect(sampler.next()).toBe('done');
  });

  it('never promotes a diverged trial', () => {
    const sampler = create(4);
    startAndReport(sampler, [null, null, null]);
    expect(job(sampler.next())).toEqual([3, 0, 0, 1]);
    expect(sampler.mayContinue(0)).toBe(false);
  });

  it('keeps a checkpoint while the rung can still grow, and drops it once the trial can never be a candidate', () => {
    const sampler = create(3);
    sampler.next();
    sampler.next();
    sampler.report({ trialId: 0, rung: 0, loss: 0.5 });
    expect(sampler.mayContinue(0)).toBe(true); // trial 2 has not even started
    sampler.next();
    sampler.report({ trialId: 1, rung: 0, loss: 0.2 });
    sampler.report({ trialId: 2, rung: 0, loss: 0.9 });
    // Rung 0 is final: only trial 1 (the one candidate) may go on.
    expect([0, 1, 2].map((id) => sampler.mayContinue(id))).toEqual([false, true, false]);
    sampler.next();
    expect(sampler.mayContinue(1)).toBe(true); // its rung-1 job is running, rung 1 is not the top
  });
});
