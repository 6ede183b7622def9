import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { leaderSteps, plannedEpochs, rungShares, computeSpent } from '../src/plot/analysis/budget.js';
import { forestImportance, mainEffects, type InputKind } from '../src/plot/analysis/importance.js';
import { studyJobs } from '../src/plot/analysis/jobs.js';
import { rungAgreements, rungStandings, spearman } from '../src/plot/analysis/rung-agreement.js';
import { studyImportance } from '../src/plot/analysis/study-importance.js';
import { stream } from '../src/random/streams.js';
import type { StudyDocument } from '../src/store/types.js';
import { rankTrials } from '../src/core/ranking.js';
import { studyFixture } from './helpers/study-fixtures.js';

const fixture = studyFixture;

const randomFive = fixture('random-five');
const halvingNine = fixture('halving-nine');
const hyperband = fixture('hyperband-generated');

describe('rank agreement between rungs', () => {
  it("gives Spearman's rho 0.8 for ranks (1..5) against (2, 1, 4, 3, 5)", () => {
    // Source: Spearman's rho without ties, 1 - 6 sum d^2 / (n (n^2 - 1)); REFERENCES.md "Rank agreement" (derived).
    expect(spearman([1, 2, 3, 4, 5], [2, 1, 4, 3, 5])).toBeCloseTo(0.8, 12);
    expect(spearman([1, 2, 3], [3, 2, 1])).toBeCloseTo(-1, 12);
    expect(spearman([1], [1])).toBeNaN();
  });

  it('compares consecutive rungs among the configurations scored at both', () => {
    const rows = rungAgreements(halvingNine);
    expect(rows.map((r) => [r.bracket, r.fromRung, r.configurations])).toEqual([
      [0, 0, 3],
      [0, 1, 1],
    ]);
    // Trials 5, 2, 7 reached rung 1: log losses 0.38, 0.45, 0.5 at rung 0 and 0.34, 0.37, 0.41 at rung 1: same order.
    expect(rows[0]!.rho).toBeCloseTo(1, 12);
    expect(rows[1]!.rho).toBeNaN();
  });

  it("places the winner at every rung it reached, among the bracket's trials scored there", () => {
    const winner = rankTrials(halvingNine.trials, halvingNine.goal)[0]!.trial.id;
    expect(winner).toBe(5);
    expect(rungStandings(halvingNine).filter((s) => s.trialId === winner).map((s) => [s.rung, s.rungEpochs, s.place, s.of])).toEqual([
      [0, 1, 1, 9],
      [1, 3, 1, 3],
      [2, 9, 1, 1],
    ]);
  });
});

describe('budget spent', () => {
  it('counts the epochs of every job, rebuilding the jobs of files from before jobs were recorded', () => {
    // 6 trials stopped after 1 epoch, 2 after 3, 1 after 9: 6 + 2 * 3 + 9 = 21 epochs.
    expect(computeSpent(halvingNine).epochs).toBe(21);
    expect(studyJobs(halvingNine)).toHaveLength(9 + 3 + 1);
    // Successive halving, 9 configurations, eta 3, 1 to 9 epochs: 9 * 1 + 3 * (3 - 1) + 1 * (9 - 3) = 21.
    expect(plannedEpochs(halvingNine)).toBe(21);
  });

  it('counts recorded jobs by their epochs, a job that trained again from epoch 0 in full', () => {
    const study = structuredClone(halvingNine);
    const winner = study.trials.find((t) => t.id === 5)!;
    // Rung 1 continued from the checkpoint (epochs 2..3); rung 2 found its checkpoint lost and trained 1..9 again.
    winner.jobs = [
      { rung: 0, fromEpoch: 0, toEpoch: 1, fromCheckpoint: false, attempts: 1, status: 'done' },
      { rung: 1, fromEpoch: 1, toEpoch: 3, fromCheckpoint: true, attempts: 1, status: 'done' },
      { rung: 2, fromEpoch: 0, toEpoch: 9, fromCheckpoint: false, attempts: 1, status: 'done' },
    ];
    const jobs = studyJobs(study).filter((j) => j.trialId === 5);
    expect(jobs.map((j) => [j.rung, j.epochs, j.score])).toEqual([
      [0, 1, 0.38],
      [1, 2, 0.34],
      [2, 9, 0.22],
    ]);
    // 21 epochs as planned, and 3 more for the rung-2 job that started again from epoch 0.
    expect(computeSpent(study).epochs).toBe(24);
    // A job still running has not ended: it spends nothing yet and scores nothing.
    winner.jobs[2]!.status = 'training';
    expect(studyJobs(study).filter((j) => j.trialId === 5)).toHaveLength(2);
  });

  it("ends the leader's replay at the study's rank 1", () => {
    for (const study of [randomFive, halvingNine, hyperband]) {
      const steps = leaderSteps(study);
      expect(steps.at(-1)!.leaderId).toBe(rankTrials(study.trials, study.goal)[0]!.trial.id);
      expect(steps.at(-1)!.epochsSpent).toBe(computeSpent(study).epochs);
      // Compute only grows along the replay.
      for (let i = 1; i < steps.length; i++) expect(steps[i]!.epochsSpent).toBeGreaterThanOrEqual(steps[i - 1]!.epochsSpent);
    }
  });

  it('splits the epochs over rungs, shares summing to 1', () => {
    const shares = rungShares(halvingNine);
    expect(shares.map((s) => [s.rung, s.configurations, s.epochs])).toEqual([
      [0, 9, 9],
      [1, 3, 6],
      [2, 1, 6],
    ]);
    for (const study of [halvingNine, hyperband]) expect(rungShares(study).reduce((s, r) => s + r.share, 0)).toBeCloseTo(1, 12);
  });
});

describe('hyperparameter importance', () => {
  const continuous: InputKind[] = [{ kind: 'continuous' }, { kind: 'continuous' }];

  it('recovers the hand-derived shares a^2 / (a^2 + b^2) of f = a x1 + b x2 from the function itself', () => {
    // For x1, x2 independent uniform on [0, 1]: Var(a x1) = a^2 / 12, Var(b x2) = b^2 / 12, no interaction,
    // so the shares are a^2 / (a^2 + b^2) and b^2 / (a^2 + b^2); with a = 2, b = 1: 0.8 and 0.2.
    // Source: Hutter, Hoos, Leyton-Brown, ICML 2014, section 3 (variance decomposition; shares derived by hand here).
    const f = (rows: readonly number[][]) => rows.map(([x1, x2]) => 2 * x1! + x2!);
    const { effects } = mainEffects(f, continuous, { rng: stream('test', 'linear'), backgroundRows: 2000, gridPoints: 41 });
    expect(effects[0]!.share).toBeCloseTo(0.8, 1);
    expect(effects[1]!.share).toBeCloseTo(0.2, 1);
  });

  it('leaves the interaction out of the main effects of f = x1 + x2 + x1 x2 on [-1, 1]', () => {
    // With u, v uniform on [-1, 1] (variance 1/3, mean 0): E[f | u] = u, variance 1/3 (same for v);
    // the interaction u v has variance 1/9; total 1/3 + 1/3 + 1/9 = 7/9. Shares 3/7, 3/7 (and 1/7 left over).
    const f = (rows: readonly number[][]) =>
      rows.map(([a, b]) => {
        const u = 2 * a! - 1;
        const v = 2 * b! - 1;
        return u + v + u * v;
      });
    const { effects } = mainEffects(f, continuous, { rng: stream('test', 'interaction'), backgroundRows: 4000, gridPoints: 41 });
    expect(effects[0]!.share).toBeGreaterThan(3 / 7 - 0.05);
    expect(effects[0]!.share).toBeLessThan(3 / 7 + 0.05);
    expect(effects[0]!.share + effects[1]!.share).toBeLessThan(0.92);
  });

  it('gives a choice input its share: f = 3 [c = 1] + x on a two-level choice and a uniform', () => {
    // Var(3 B) with B Bernoulli(1/2) = 9/4; Var(x) = 1/12; shares 27/28 and 1/28.
    const f = (rows: readonly number[][]) => rows.map(([c, x]) => 3 * (c === 1 ? 1 : 0) + x!);
    const { effects } = mainEffects(f, [{ kind: 'choice', levels: 2 }, { kind: 'continuous' }], { rng: stream('test', 'choice'), backgroundRows: 4000 });
    expect(effects[0]!.share).toBeCloseTo(27 / 28, 1);
  });

  it('ranks the inputs of a forest fitted to f = 2 x1 + x2 near the shares 0.8 and 0.2', () => {
    const rng = stream('test', 'forest-data');
    const rows = Array.from({ length: 200 }, () => [rng(), rng(), rng()]);
    const values = rows.map(([x1, x2]) => 2 * x1! + x2!);
    const { effects } = forestImportance(rows, values, [...continuous, { kind: 'continuous' }], { seedKey: ['test'], trees: 30 });
    expect(effects[0]!.share).toBeGreaterThan(0.65);
    expect(effects[0]!.share).toBeLessThan(0.9);
    expect(effects[1]!.share).toBeGreaterThan(0.1);
    expect(effects[1]!.share).toBeLessThan(0.3);
    // The third input does not enter f.
    expect(effects[2]!.share).toBeLessThan(0.05);
  });

  it('fits a long study on a seeded sample of configurations and still finds the same shares, the same way each time', () => {
    const rng = stream('test', 'forest-data-long');
    const rows = Array.from({ length: 1200 }, () => [rng(), rng(), rng()]);
    const values = rows.map(([x1, x2]) => 2 * x1! + x2!);
    const options = { seedKey: ['test'], trees: 20, maxRows: 150 };
    const { effects } = forestImportance(rows, values, [...continuous, { kind: 'continuous' }], options);
    expect(effects[0]!.share).toBeGreaterThan(0.65);
    expect(effects[0]!.share).toBeLessThan(0.9);
    expect(effects[1]!.share).toBeGreaterThan(0.1);
    expect(effects[1]!.share).toBeLessThan(0.3);
    expect(forestImportance(rows, values, [...continuous, { kind: 'continuous' }], options).effects.map((e) => e.share)).toEqual(effects.map((e) => e.share));
  });

  it('is the same on every run of the same study file', () => {
    const first = studyImportance(hyperband)!;
    expect(first.parameters.map((p) => p.share)).toEqual(studyImportance(hyperband)!.parameters.map((p) => p.share));
    // 49 trials; trial 11 failed before its first epoch.
    expect(first.configurations).toBe(48);
    expect(first.parameters[0]!.share).toBeGreaterThanOrEqual(first.parameters.at(-1)!.share);
  });

  it('is left out with too few scored configurations', () => {
    expect(studyImportance(randomFive)).toBeUndefined();
  });
});
