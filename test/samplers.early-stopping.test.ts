/**
 * The promotion rule with early stopping: a trial that early stopping ended is ranked in its rung at
 * its best epoch's score but never promoted past the point it stopped. Sequences are hand-worked.
 */
import { describe, expect, it } from 'vitest';
import { AsyncHalvingSampler } from '../src/samplers/async-halving.js';
import { HyperbandSampler } from '../src/samplers/hyperband.js';
import { createSampler, replay, SAMPLER_PLUGINS } from '../src/samplers/index.js';
import type { Job, JobOutcome, Sampler } from '../src/samplers/sampler.js';
import { SuccessiveHalvingSampler } from '../src/samplers/successive-halving.js';
import { budgetSchema } from '../src/core/budget.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { spaceSchema } from '../src/space/schema.js';
import type { TrialConfiguration } from '../src/core/configuration.js';

const configurationFor = (trialId: number): TrialConfiguration => ({
  depth: 1, width: 8 + trialId, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0,
});

/** Hands out every job the sampler has now and returns them. */
function drain(sampler: Sampler): Job[] {
  const jobs: Job[] = [];
  for (let next = sampler.next(); typeof next !== 'string'; next = sampler.next()) jobs.push(next);
  return jobs;
}

describe('halving samplers with early stopping', () => {
  it('successive halving (9 trials, eta 3): the best of rung 0 stopped early, so the next three are promoted', () => {
    // Source: Jamieson, Talwalkar, AISTATS 2016: rung 1 keeps floor(9 / 3) = 3 of rung 0 (the plan).
    const sampler = new SuccessiveHalvingSampler({ trials: 9, minEpochs: 1, maxEpochs: 9, eta: 3, configurationFor });
    const first = drain(sampler);
    expect(first.map((j) => j.trialId)).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8]);
    // Trial 0 has the smallest loss but stopped early; losses grow with the id.
    for (const job of first) sampler.report({ trialId: job.trialId, rung: 0, loss: job.trialId / 10, ...(job.trialId === 0 ? { stopped: true } : {}) });
    expect(sampler.mayContinue(0)).toBe(false);
    expect(drain(sampler).map((j) => [j.trialId, j.rung])).toEqual([[1, 1], [2, 1], [3, 1]]);
  });

  it('successive halving: a stopped trial is not kept for promotion while its rung is still open', () => {
    const sampler = new SuccessiveHalvingSampler({ trials: 3, minEpochs: 1, maxEpochs: 3, eta: 3, configurationFor });
    drain(sampler);
    sampler.report({ trialId: 1, rung: 0, loss: 0.1, stopped: true });
    expect(sampler.mayContinue(1)).toBe(false);
    expect(sampler.mayContinue(0)).toBe(true);
  });

  it('asynchronous halving: a stopped trial in the top 1/eta is passed over, not promoted', () => {
    // Source: Li et al., MLSys 2020, Algorithm 2: the candidates are the top floor(|rung| / eta).
    const sampler = new AsyncHalvingSampler({ trials: 10, minEpochs: 1, maxEpochs: 9, eta: 3, configurationFor });
    for (let i = 0; i < 3; i++) sampler.next();
    sampler.report({ trialId: 0, rung: 0, loss: 0.5 });
    sampler.report({ trialId: 1, rung: 0, loss: 0.2, stopped: true });
    sampler.report({ trialId: 2, rung: 0, loss: 0.9 });
    expect(sampler.mayContinue(1)).toBe(false);
    const next = sampler.next() as Job;
    expect([next.trialId, next.rung]).toEqual([3, 0]); // no promotion: a new configuration starts
  });

  it('Hyperband: inside a bracket the stopped trial gives its place to the next best', () => {
    // Source: Li et al., Hyperband, JMLR 2018: R = 9, eta = 3, bracket s = 2 starts 9 configurations at 1 epoch, keeps 3.
    const sampler = new HyperbandSampler({ maxEpochs: 9, minEpochs: 1, eta: 3, configurationFor, overlapBrackets: false });
    const rung0 = drain(sampler);
    expect(rung0).toHaveLength(9);
    for (const job of rung0) sampler.report({ trialId: job.trialId, rung: 0, loss: job.trialId / 10, ...(job.trialId === 2 ? { stopped: true } : {}) });
    expect(drain(sampler).filter((j) => j.rung === 1).map((j) => j.trialId)).toEqual([0, 1, 3]);
  });
});

describe('every sampler kind with a schedule in the space and trials that stop early', () => {
  const space = spaceSchema.parse({
    depth: { min: 1, max: 3 },
    width: { min: 4, max: 64, log: true },
    activation: ['relu', 'tanh'],
    learningRate: { min: 1e-4, max: 0.3 },
    schedule: { kind: ['constant', 'step', 'cosine'], gamma: { min: 0.1, max: 0.9 }, stepEpochs: { min: 2, max: 9 }, warmupEpochs: 1, minFactor: { min: 0, max: 0.2 } },
  });
  /** Stand-in for training: better near learning rate 0.01; every fourth trial "stops early". */
  const loss = (job: Job): number => Math.abs(Math.log10(job.configuration.learningRate) + 2) + 1 / job.toEpoch + (job.configuration.gamma ?? 0) / 10;

  for (const plugin of SAMPLER_PLUGINS) {
    it(`${plugin.kind}: draws schedules, never continues a stopped trial, and replays to the same jobs`, () => {
      const definition = { space, budget: budgetSchema.parse({ trials: 18, maxEpochs: 27 }), sampler: samplerSchema.parse({ kind: plugin.kind, seed: 4 }) };
      const sampler = createSampler(definition);
      const jobs: Job[] = [];
      const outcomes: JobOutcome[] = [];
      const stopped = new Set<number>();
      for (let next = sampler.next(); next !== 'done'; next = sampler.next()) {
        if (next === 'wait') throw new Error('one job at a time never waits');
        expect(stopped.has(next.trialId), `trial ${next.trialId} continued after it stopped`).toBe(false);
        expect(['constant', 'step', 'cosine']).toContain(next.configuration.schedule);
        expect(next.configuration.warmupEpochs).toBe(1);
        jobs.push(next);
        const outcome: JobOutcome = { trialId: next.trialId, rung: next.rung, loss: loss(next), ...(next.trialId % 4 === 1 ? { stopped: true } : {}) };
        if (outcome.stopped) stopped.add(next.trialId);
        outcomes.push(outcome);
        sampler.report(outcome);
      }
      const history = new Map(jobs.map((j) => [j.trialId, j.configuration]));
      const again = createSampler(definition);
      const { pending, unused } = replay(again, outcomes, history);
      expect(pending).toEqual([]);
      expect(unused).toEqual([]);
      expect(again.next()).toBe('done');
    });
  }
});
