/**
 * The time-left estimate prices an epoch by the network's work per row (`core/size.ts`'s `rowWork`):
 * its dense layers' multiply-adds and, with residual blocks, its normalisations. Hand-worked values.
 */
import { describe, expect, it } from 'vitest';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { NORMALISATION_WORK, rowWork } from '../src/core/size.js';
import { epochCost, TimeLeftEstimator } from '../src/report/time-left.js';
import type { Job } from '../src/samplers/sampler.js';

const BASE: TrialConfiguration = { depth: 2, width: 8, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0 };

describe('the work of a row', () => {
  it('counts each dense layer\'s fan-in x fan-out', () => {
    // Hand-worked: 4 inputs -> 3 -> 3 -> 2 outputs: 4x3 + 3x3 + 3x2 = 12 + 9 + 6 = 27 multiply-adds.
    // Common practice (no source): a dense layer of n inputs and m units does n x m multiply-adds per row.
    expect(rowWork({ depth: 2, width: 3 }, 4, 2)).toBe(27);
  });

  it('follows a funnel\'s narrowing layers', () => {
    // Hand-worked: width 64 over depth 3 is 64, 32, 16 units; 10 inputs, 1 output:
    // 10x64 + 64x32 + 32x16 + 16x1 = 640 + 2048 + 512 + 16 = 3216 (depth x width^2 would say 12288).
    expect(rowWork({ depth: 3, width: 64, shape: 'funnel' }, 10, 1)).toBe(3216);
  });

  it('counts a residual network\'s two layers per block and its normalisations', () => {
    // Hand-worked: 4 inputs -> 8, two blocks of 8 -> 8 -> 8, then 8 -> 1: 32 + 2 x (64 + 64) + 8 = 296
    // multiply-adds; 3 normalisations (one per block, one before the output) of 8 values each.
    expect(NORMALISATION_WORK).toBe(5);
    expect(rowWork({ ...BASE, block: 'residual' }, 4, 1)).toBe(296 + 5 * 8 * 3);
    // The plain network of the same depth and width: 4x8 + 8x8 + 8x1 = 104.
    expect(rowWork(BASE, 4, 1)).toBe(104);
    expect(epochCost({ ...BASE, block: 'residual' }, { inputs: 4, outputs: 1 })).toBe(416);
  });
});

describe('the time-left estimate', () => {
  const job = (trialId: number, configuration: TrialConfiguration, toEpoch: number): Job => ({ trialId, configuration, rung: 0, bracket: 0, fromEpoch: 0, toEpoch });

  it('prices a residual network\'s epochs by its work, from the seconds a plain network\'s epoch took', () => {
    const estimate = new TimeLeftEstimator(1, { inputs: 4, outputs: 1 });
    const plain = job(0, BASE, 1);
    estimate.started(plain, 0);
    estimate.epoch(0, 1);
    estimate.jobEnded(plain);
    estimate.started(job(1, { ...BASE, block: 'residual' }, 2), 1000);
    // Hand-worked: 1 s per 104 units of work; the residual job's 2 epochs cost 2 x 416, so 8 s on 1 thread.
    expect(estimate.secondsLeft(2, 1000)).toBeCloseTo(8, 10);
  });
});
