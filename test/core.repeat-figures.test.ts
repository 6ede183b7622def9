/**
 * The repeat runs' figures (src/core/repeat-figures.ts): mean and standard error, the paired t interval
 * against the winner, the one-standard-error pick, and the weight count, on a constructed case worked
 * by hand.
 */
import { describe, expect, it } from 'vitest';
import { oneStandardErrorPick, pairedDifference, repeatCandidates, repeatSummary, standardErrorOf, T_975 } from '../src/core/repeat-figures.js';
import { weightCount } from '../src/core/size.js';
import type { RepeatsRecord } from '../src/core/repeats.js';
import type { Goal } from '../src/core/configuration.js';
import { trialRecord } from './helpers/trials.js';

const ACCURACY: Goal = { metric: 'accuracy', better: 'higher' };
const shape = (depth: number, width: number) => ({ configuration: { depth, width, activation: 'relu' as const, learningRate: 0.01, batchSize: 32, optimizer: 'adam' as const, l2: 0, dropout: 0 } });

/**
 * Three configurations on 4 inputs and 3 classes, each with its search run and 3 further seeds:
 *   A, trial 10, 2 x 8: 0.90 0.92 0.94 0.96
 *   B, trial 11, 1 x 8: 0.89 0.92 0.92 0.95
 *   C, trial 12, 1 x 4: 0.80 0.82 0.84 0.86
 */
function constructedCase(): { trials: ReturnType<typeof trialRecord>[]; record: RepeatsRecord } {
  const scores: Record<number, number[]> = { 10: [0.9, 0.92, 0.94, 0.96], 11: [0.89, 0.92, 0.92, 0.95], 12: [0.8, 0.82, 0.84, 0.86] };
  const trials = [trialRecord(10, 0.9, shape(2, 8)), trialRecord(11, 0.89, shape(1, 8)), trialRecord(12, 0.8, shape(1, 4))];
  const runs = Object.entries(scores).flatMap(([id, values]) =>
    values.slice(1).map((score, i) => ({ trialId: Number(id), index: i + 1, seed: i + 1, epochs: 10, status: 'completed' as const, score, workerSeconds: 1 })),
  );
  return { trials, record: { trialIds: [10, 11, 12], seeds: 3, runs } };
}

describe('weightCount', () => {
  it('counts kernels and biases layer by layer', () => {
    // Worked by hand: 4x8+8 + 8x8+8 + 8x3+3 = 40 + 72 + 27.
    expect(weightCount({ depth: 2, width: 8 }, 4, 3)).toBe(139);
    expect(weightCount({ depth: 1, width: 4 }, 4, 3)).toBe(4 * 4 + 4 + 4 * 3 + 3);
    // Depth 0 is the linear model: inputs x outputs + outputs.
    expect(weightCount({ depth: 0, width: 99 }, 4, 3)).toBe(15);
  });
});

describe('the paired t interval', () => {
  it('is mean ± t(0.975, 3) s_d / sqrt(4) for four pairs (worked by hand)', () => {
    // B - A = (-0.01, 0, -0.02, -0.01): mean -0.01, s_d^2 = 0.0002 / 3, s_d / sqrt(4) = 0.0040825;
    // half width 3.182 x 0.0040825 = 0.012990. Source: Student, "The probable error of a mean", 1908;
    // the paired t interval as in NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.5.3 (from memory).
    const d = pairedDifference([0.89, 0.92, 0.92, 0.95], [0.9, 0.92, 0.94, 0.96])!;
    expect(d.pairs).toBe(4);
    expect(d.mean).toBeCloseTo(-0.01, 12);
    expect(d.low).toBeCloseTo(-0.01 - 0.01299, 5);
    expect(d.high).toBeCloseTo(-0.01 + 0.01299, 5);
  });

  it('pairs only the runs both configurations have', () => {
    const d = pairedDifference([0.5, null, 0.7, 0.6], [0.4, 0.5, null, 0.5])!;
    expect(d.pairs).toBe(2);
    expect(d.mean).toBeCloseTo(0.1, 12);
    expect(pairedDifference([0.5, null], [0.4, 0.5])).toBeUndefined();
  });

  it('uses t quantiles that are the 97.5% points of Student t', () => {
    // The definition checked numerically: with t = sqrt(v) tan(theta), P(0 < T < q) / P(0 < T) is the
    // integral of cos^(v-1) from 0 to atan(q / sqrt(v)) over the integral to pi / 2 (Simpson's rule).
    // Source: Student 1908; table values as printed to 3 decimals in the NIST/SEMATECH handbook, 1.3.6.7.2.
    const integral = (v: number, to: number): number => {
      const n = 20000;
      const h = to / n;
      let sum = 0;
      for (let i = 0; i <= n; i++) sum += (i === 0 || i === n ? 1 : i % 2 === 1 ? 4 : 2) * Math.cos(i * h) ** (v - 1);
      return (sum * h) / 3;
    };
    T_975.forEach((q, i) => {
      const v = i + 1;
      const cdf = 0.5 + 0.5 * (integral(v, Math.atan(q / Math.sqrt(v))) / integral(v, Math.PI / 2));
      expect(Math.abs(cdf - 0.975), `df ${v}`).toBeLessThan(1e-4);
    });
  });
});

describe('the repeat summary and the one-standard-error pick', () => {
  it('gives mean ± standard error, marks the runner-up that cannot be told apart, and picks the smaller network', () => {
    const { trials, record } = constructedCase();
    const summary = repeatSummary(trials, ACCURACY, { inputs: 4, outputs: 3 }, { record })!;
    const [a, b, c] = summary.figures;
    // A: mean 0.93, squared deviations 0.002, s^2 = 0.002 / 3, se = sqrt(s^2 / 4) = 0.0129099.
    expect(a!.mean).toBeCloseTo(0.93, 12);
    expect(a!.standardError).toBeCloseTo(0.0129099, 6);
    expect(b!.mean).toBeCloseTo(0.92, 12);
    expect(c!.mean).toBeCloseTo(0.83, 12);
    // B's interval [-0.02299, 0.00299] holds 0; C - A is -0.10 on every run (interval [-0.1, -0.1]).
    expect(a!.indistinguishable).toBe(true);
    expect(b!.indistinguishable).toBe(true);
    expect(c!.indistinguishable).toBe(false);
    expect(c!.difference!.high).toBeCloseTo(-0.1, 12);
    // Weights: A 139, B 67, C 35. The line is 0.93 - 0.0129099 = 0.917090: A and B reach it, C does not,
    // so the one-standard-error rule (Hastie, Tibshirani, Friedman, The Elements of Statistical Learning,
    // 2nd ed., 2009, section 7.10) takes B, the fewer weights of the two.
    expect(summary.figures.map((f) => f.weights)).toEqual([139, 67, 35]);
    expect(summary.winnerId).toBe(10);
    expect(summary.bestId).toBe(10);
    expect(summary.line).toBeCloseTo(0.91709, 5);
    expect(summary.pickId).toBe(11);
  });

  it('measures the line from the best mean, which way is better following the goal', () => {
    const figures = [
      { trialId: 1, values: [], count: 4, mean: 0.30, standardError: 0.02, weights: 500, indistinguishable: true },
      { trialId: 2, values: [], count: 4, mean: 0.28, standardError: 0.05, weights: 900, indistinguishable: true },
      { trialId: 3, values: [], count: 4, mean: 0.31, standardError: 0.01, weights: 100, indistinguishable: true },
      { trialId: 4, values: [], count: 4, mean: 0.34, standardError: 0.01, weights: 50, indistinguishable: false },
    ];
    // Lower is better: best mean 0.28 (trial 2), line 0.28 + 0.05 = 0.33; trials 1, 2, 3 reach it; trial 3 has the fewest weights.
    expect(oneStandardErrorPick(figures, { metric: 'logLoss', better: 'lower' })).toEqual({ bestId: 2, line: expect.closeTo(0.33, 12), pickId: 3 });
  });

  it('takes the standard error as s / sqrt(n), none for one value', () => {
    expect(standardErrorOf([1, 2, 3, 4])).toBeCloseTo(Math.sqrt(5 / 3 / 4), 12);
    expect(standardErrorOf([1])).toBeUndefined();
  });

  it('repeats the best finished, healthy trials of the one ranking', () => {
    const trials = [
      trialRecord(1, 0.8),
      trialRecord(2, 0.95, { flags: ['no-lift'] }),
      trialRecord(3, 0.9),
      trialRecord(4, 0.99, { status: 'dropped' }),
      trialRecord(5, 0.85),
    ];
    expect(repeatCandidates(trials, ACCURACY, 2).map((t) => t.id)).toEqual([3, 5]);
  });
});
