/**
 * The Parzen estimators of the tree-structured Parzen estimator, on examples worked by hand.
 * Source: Bergstra, Bardenet, Bengio, Kégl, "Algorithms for Hyper-Parameter Optimization", NeurIPS 2011,
 * section 4 (one kernel per observation, bandwidth the larger gap to a neighbour, a prior kernel; From memory).
 * Normal table values: Abramowitz, Stegun, Handbook of Mathematical Functions, 1964, table 26.1.
 */
import { describe, expect, it } from 'vitest';
import { stream } from '../src/random/streams.js';
import { bandwidths, erf, fitCategorical, fitNumeric, normalCdf, numericDensity, sampleNumeric } from '../src/samplers/parzen.js';
import { TpeModel, splitObservations } from '../src/samplers/tpe-model.js';
import type { Dimension } from '../src/space/dimensions.js';

// Standard normal table (A&S 26.1): Phi(0.5), Phi(1), Phi(3); density phi(z) = exp(-z^2 / 2) / sqrt(2 pi).
const PHI_HALF = 0.691462;
const PHI_1 = 0.841345;
const PHI_3 = 0.99865;
const phi = (z: number) => Math.exp(-z * z / 2) / Math.sqrt(2 * Math.PI);

describe('Parzen estimator on the unit interval', () => {
  it('computes the normal distribution function to table accuracy', () => {
    // Source: Abramowitz, Stegun 1964, table 26.1 and formula 7.1.26 (|error| <= 1.5e-7).
    expect(normalCdf(0.5)).toBeCloseTo(PHI_HALF, 6);
    expect(normalCdf(1)).toBeCloseTo(PHI_1, 6);
    expect(normalCdf(3)).toBeCloseTo(PHI_3, 5);
    expect(erf(0)).toBeCloseTo(0, 7);
  });

  it('observations 0.25 and 0.75 with a prior of weight 1: weights 1/3 each, widths 0.25, prior width 1', () => {
    // Kernel centres sorted: 0.25, 0.5 (prior), 0.75. The end kernels have one neighbour each, 0.25 away:
    // width 0.25. The clip's floor is 1 / min(100, 3 kernels + 1) = 0.25, so nothing moves.
    // Weights: each observation 1 / (n + w) = 1 / 3, the prior w / (n + w) = 1 / 3.
    const parzen = fitNumeric([0.25, 0.75], { wideKernelWeight: 1, bandwidth: 'neighbour-gap' });
    expect(parzen.means).toEqual([0.25, 0.75, 0.5]);
    expect(parzen.sigmas).toEqual([0.25, 0.25, 1]);
    expect(parzen.weights.map((w) => w * 3)).toEqual([1, 1, 1].map((one) => expect.closeTo(one, 12)));
    // Mass of each kernel inside [0, 1]: Phi((1 - mu) / s) - Phi(-mu / s).
    // mu 0.25, s 0.25: Phi(3) - Phi(-1) = 0.99865 - (1 - 0.841345) = 0.839995; mu 0.5, s 1: 2 Phi(0.5) - 1 = 0.382924.
    expect(parzen.masses[0]).toBeCloseTo(PHI_3 - (1 - PHI_1), 5);
    expect(parzen.masses[1]).toBeCloseTo(PHI_3 - (1 - PHI_1), 5);
    expect(parzen.masses[2]).toBeCloseTo(2 * PHI_HALF - 1, 5);
  });

  it('gives density 1.11544 at 0.5 and 1.05554 at 0.25 for that mixture', () => {
    const parzen = fitNumeric([0.25, 0.75], { wideKernelWeight: 1, bandwidth: 'neighbour-gap' });
    const side = 0.25 * (PHI_3 - (1 - PHI_1)); // s * mass of an end kernel = 0.209999
    const prior = 1 * (2 * PHI_HALF - 1); // s * mass of the prior = 0.382924
    // At 0.5: prior phi(0) / 0.382924 = 1.041829; each end kernel phi(1) / 0.209999 = 1.152249.
    const atHalf = (phi(0) / prior + 2 * (phi(1) / side)) / 3;
    expect(atHalf).toBeCloseTo(1.115442, 5);
    expect(numericDensity(parzen, 0.5)).toBeCloseTo(atHalf, 5);
    // At 0.25: prior phi(0.25) / 0.382924 = 1.009776; own kernel phi(0) / 0.209999 = 1.899731; the other phi(2) / 0.209999 = 0.257101.
    const atQuarter = (phi(0.25) / prior + phi(0) / side + phi(2) / side) / 3;
    expect(atQuarter).toBeCloseTo(1.055536, 5);
    expect(numericDensity(parzen, 0.25)).toBeCloseTo(atQuarter, 5);
  });

  it('gives the prior half the mass when its weight is 2 against 2 observations', () => {
    expect(fitNumeric([0.25, 0.75], { wideKernelWeight: 2, bandwidth: 'neighbour-gap' }).weights).toEqual([0.25, 0.25, 0.5]);
  });

  it('takes the larger gap for an inner kernel and clips tiny gaps', () => {
    // Centres 0.1, 0.2, 0.5 (prior), 0.9: 0.2 has gaps 0.1 and 0.3 -> 0.3; 0.1 -> 0.1; 0.9 -> 0.4. Floor 1 / 5 = 0.2.
    expect(bandwidths([0.1, 0.2, 0.9], 'neighbour-gap', true)).toEqual([0.2, expect.closeTo(0.3, 12), expect.closeTo(0.4, 12)]);
  });

  it("gives every kernel Scott's width 1.059 sd n^(-1/5)", () => {
    // Source: Scott, Multivariate Density Estimation, 1992 (normal reference rule; From memory).
    // 0.2, 0.4, 0.6, 0.8: sd = sqrt(0.2 / 3) = 0.258199; 4^(-0.2) = 0.757858; 1.059 * 0.258199 * 0.757858 = 0.207223.
    expect(bandwidths([0.2, 0.4, 0.6, 0.8], 'scott', true)).toEqual(Array(4).fill(expect.closeTo(0.207223, 5)));
  });

  it('draws from the truncated kernel: inside [0, 1], above 0.5 three times in four for a kernel at 0.9 of width 0.4', () => {
    // One observation at 0.9 beside the prior's centre 0.5: width 0.4. P(x > 0.5 | x in [0, 1]) =
    // (Phi(0.25) - Phi(-1)) / (Phi(0.25) - Phi(-2.25)) = (0.598706 - 0.158655) / (0.598706 - 0.012224) = 0.7503 (table 26.1).
    const parzen = fitNumeric([0.9], { wideKernelWeight: 0.001, bandwidth: 'neighbour-gap' });
    expect(parzen.sigmas[0]).toBeCloseTo(0.4, 12);
    const rng = stream(3, 'draws');
    const draws = Array.from({ length: 2000 }, () => sampleNumeric(parzen, rng));
    expect(Math.min(...draws)).toBeGreaterThanOrEqual(0);
    expect(Math.max(...draws)).toBeLessThanOrEqual(1);
    // 2000 draws: standard error sqrt(0.75 * 0.25 / 2000) = 0.0097; the bounds are 5 of them either side.
    const above = draws.filter((x) => x > 0.5).length / draws.length;
    expect(above).toBeGreaterThan(0.7503 - 0.05);
    expect(above).toBeLessThan(0.7503 + 0.05);
  });
});

describe('smoothed categories', () => {
  it('counts choices 0, 0, 2 of 3 with prior weight 1 as (2 + 1/3, 1/3, 1 + 1/3) / 4', () => {
    expect(fitCategorical([0, 0, 2], 3, 1)).toEqual([7 / 12, 1 / 12, 4 / 12].map((p) => expect.closeTo(p, 12)));
  });
});

describe('the good / rest split and the density ratio', () => {
  const observations = [0.8, 0.1, 0.5, null, 0.3, 0.9, 0.2, 0.7].map((loss, trialId) => ({ trialId, point: [trialId / 8], loss }));

  it('puts the best ceil(gamma n) in the good group: 2 of 8 for gamma 0.25, diverged trials last', () => {
    const { good, rest } = splitObservations(observations, 0.25);
    expect(good.map((o) => o.trialId)).toEqual([1, 6]);
    expect(rest.map((o) => o.trialId)).toEqual([4, 2, 7, 0, 5, 3]);
  });

  it('keeps at least minimumGroup in each group, overlapping when there are too few', () => {
    const { good, rest } = splitObservations(observations.slice(0, 4), 0.15, 3);
    expect(good.map((o) => o.trialId)).toEqual([1, 2, 0]);
    expect(rest.map((o) => o.trialId)).toEqual([2, 0, 3]);
  });

  it('scores a point near the good observations above one near the rest, and proposes near the good ones', () => {
    const dimension: Dimension = { kind: 'numeric', name: 'x', min: 0, max: 1, log: false, integer: false };
    const points = [0.1, 0.15, 0.2, 0.6, 0.7, 0.8, 0.9, 0.95];
    const model = new TpeModel([dimension], points.map((x, trialId) => ({ trialId, point: [x], loss: x })), {
      gamma: 0.25, drawsPerProposal: 24, wideKernelWeight: 1, bandwidth: 'neighbour-gap', drawWidening: 1,
    });
    expect(model.score([0.12])).toBeGreaterThan(model.score([0.8]));
    expect(model.propose(stream(1, 'propose')).point[0]).toBeLessThan(0.4);
  });
});
