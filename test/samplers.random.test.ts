import { describe, expect, it } from 'vitest';
import { RandomSampler } from '../src/samplers/random.js';
import type { Job } from '../src/samplers/sampler.js';
import type { TrialConfiguration } from '../src/core/configuration.js';

const configurationFor = (trialId: number): TrialConfiguration => ({
  depth: 1, width: 8 + trialId, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0,
});

describe('random sampler', () => {
  it('hands out one full-length job per trial, ids in order, then done', () => {
    const sampler = new RandomSampler({ trials: 3, maxEpochs: 20, configurationFor });
    const jobs = [sampler.next(), sampler.next(), sampler.next()] as Job[];
    expect(jobs.map(({ trialId, rung, bracket, fromEpoch, toEpoch }) => ({ trialId, rung, bracket, fromEpoch, toEpoch }))).toEqual([
      { trialId: 0, rung: 0, bracket: 0, fromEpoch: 0, toEpoch: 20 },
      { trialId: 1, rung: 0, bracket: 0, fromEpoch: 0, toEpoch: 20 },
      { trialId: 2, rung: 0, bracket: 0, fromEpoch: 0, toEpoch: 20 },
    ]);
    expect(jobs[2]!.configuration).toEqual(configurationFor(2));
    // Done while jobs are still outstanding: the run loop waits for them itself.
    expect(sampler.next()).toBe('done');
  });

  it('never keeps a checkpoint for later', () => {
    const sampler = new RandomSampler({ trials: 1, maxEpochs: 5, configurationFor });
    sampler.next();
    expect(sampler.mayContinue(0)).toBe(false);
  });

  it('rejects an outcome for a job it never handed out, or one reported twice', () => {
    const sampler = new RandomSampler({ trials: 2, maxEpochs: 5, configurationFor });
    sampler.next();
    expect(() => sampler.report({ trialId: 1, rung: 0, loss: 0.1 })).toThrow(/no outstanding job for trial 1/);
    sampler.report({ trialId: 0, rung: 0, loss: 0.1 });
    expect(() => sampler.report({ trialId: 0, rung: 0, loss: 0.1 })).toThrow(/no outstanding job for trial 0/);
  });
});
