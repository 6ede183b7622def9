/** The constant baseline worked by hand, and the health summary's regions. */
import { describe, expect, it } from 'vitest';
import { constantBaseline } from '../src/metrics/constant-baseline.js';
import { flaggedRegions, healthSummary } from '../src/report/health-summary.js';
import { baselineLine, linearBaselineWarning } from '../src/report/baseline-text.js';
import { trialRecord } from './helpers/trials.js';

describe('the constant baseline', () => {
  it('binary: predicts the training majority with the training share as every probability', () => {
    // Training: 3 of 4 rows class 1 (p = 0.75). Validation: 1, 1, 0, 0, 1.
    const entry = constantBaseline('binary', [{ trainY: Float32Array.of(1, 1, 0, 1), validationY: Float32Array.of(1, 1, 0, 0, 1) }], 2);
    // Derived: accuracy 3/5; AUC of a constant score 0.5; log loss -(3 ln 0.75 + 2 ln 0.25) / 5.
    expect(entry.metrics.accuracy).toBeCloseTo(0.6, 12);
    expect(entry.metrics.auc).toBe(0.5);
    expect(entry.metrics.logLoss).toBeCloseTo(-(3 * Math.log(0.75) + 2 * Math.log(0.25)) / 5, 6);
    expect(entry.metrics.validationLoss).toBe(entry.metrics.logLoss);
    // Macro-F1: class 1 F1 = 2*3 / (2*3 + 2 + 0) = 0.75, class 0 F1 = 0: mean 0.375.
    expect(entry.metrics.macroF1).toBeCloseTo(0.375, 12);
  });

  it('regression: the training mean, scored in the target\'s units; the validation loss on the standardised target', () => {
    // Standardised targets with mean 10, std 2: training mean 0.5 (= 11 in units).
    const entry = constantBaseline('regression', [{ trainY: Float32Array.of(0, 1, 0.5, 0.5), validationY: Float32Array.of(1.5, -0.5) }], 0, () => ({ mean: 10, std: 2 }));
    // Derived: errors in units (13 - 11, 9 - 11) = (2, -2): RMSE 2, MAE 2; MSE standardised (1 + 1) / 2 = 1.
    expect(entry.metrics.rmse).toBeCloseTo(2, 6);
    expect(entry.metrics.mae).toBeCloseTo(2, 6);
    expect(entry.metrics.validationLoss).toBeCloseTo(1, 12);
    expect(entry.metrics.r2).toBeCloseTo(0, 6);
  });

  it('with folds: the mean of the folds\' own constants', () => {
    const entry = constantBaseline('multiclass', [
      { trainY: Float32Array.of(0, 0, 1, 2), validationY: Float32Array.of(0, 1) },
      { trainY: Float32Array.of(2, 2, 1, 0), validationY: Float32Array.of(2, 2) },
    ], 3);
    // Fold 1 predicts class 0: accuracy 1/2; fold 2 predicts class 2: accuracy 1. Mean 0.75.
    expect(entry.metrics.accuracy).toBeCloseTo(0.75, 12);
    expect(entry.what).toMatch(/mean over 2 folds/);
  });
});

describe('the health summary', () => {
  const trials = [
    trialRecord(1, 0.5, { flags: ['blew-up'], configuration: { ...trialRecord(0, 0).configuration, optimizer: 'sgd', learningRate: 2 } }),
    trialRecord(2, 0.5, { flags: ['no-lift', 'flat-output'], configuration: { ...trialRecord(0, 0).configuration, optimizer: 'sgd', learningRate: 4.5 } }),
    trialRecord(3, 0.8, { configuration: { ...trialRecord(0, 0).configuration, optimizer: 'sgd', learningRate: 0.05 } }),
    trialRecord(4, 0.5, { flags: ['no-lift'], configuration: { ...trialRecord(0, 0).configuration, optimizer: 'adam', learningRate: 0.5 } }),
    trialRecord(5, 0.8, { configuration: { ...trialRecord(0, 0).configuration, optimizer: 'adam', learningRate: 0.3 } }),
  ];
  it('names the optimizer and learning-rate decade that produced them, most flagged share first', () => {
    expect(flaggedRegions(trials).map((r) => [r.optimizer, r.from, r.flagged, r.trials])).toEqual([['sgd', 1, 2, 2], ['adam', 0.1, 1, 2]]);
    expect(healthSummary(trials)).toBe('health: 3 of 5 trials flagged (flat-output 1, blew-up 1, no-lift 2); most in sgd at learning rate 1 to 10 (2 of 2), adam at learning rate 0.1 to 1 (1 of 2)');
    expect(healthSummary(trials.filter((t) => !t.flags))).toBeUndefined();
  });
});

describe('the baselines beside the leader', () => {
  const baselines = { constant: { metrics: { auc: 0.5 }, what: 'constant' }, linear: { metrics: { auc: 0.8 }, what: 'linear' } };
  const goal = { metric: 'auc' as const, better: 'higher' as const };
  it('prints both baselines and the leader, and warns when the leader does not beat the linear model by more than its standard error', () => {
    const close = { baselines, goal, trials: [trialRecord(1, 0.83, { scoreStandardError: 0.04 })] };
    expect(baselineLine(close)).toBe('baselines on the validation rows (auc): constant 0.5, linear 0.8; the leader, trial 1, 0.83');
    // 0.83 - 0.04 = 0.79 does not beat 0.8.
    expect(linearBaselineWarning(close)).toMatch(/^warning: the leader \(trial 1, auc 0.83\) does not beat the linear baseline \(0.8\) by more than its standard error \(0.04\)/);
    // 0.83 - 0.02 = 0.81 beats 0.8.
    expect(linearBaselineWarning({ ...close, trials: [trialRecord(1, 0.83, { scoreStandardError: 0.02 })] })).toBeUndefined();
    // Without folds the margin is 0: equal to the linear score is not beating it.
    expect(linearBaselineWarning({ ...close, trials: [trialRecord(1, 0.8)] })).toMatch(/^warning: .*does not beat the linear baseline \(0.8\); /);
  });
});

describe('class weights and the goal', () => {
  it('warns when the goal is accuracy and the class weights are fixed to balanced, and not otherwise', async () => {
    const { studyFromObject } = await import('../src/study/load.js');
    const base = { name: 'w', data: { csv: 'x.csv', target: 'y', task: 'multiclass' }, space: { depth: { min: 1, max: 1 }, width: { min: 4, max: 4 }, activation: ['relu'], learningRate: { min: 0.01, max: 0.01 } }, budget: { trials: 1, maxEpochs: 1 }, sampler: { kind: 'random' } };
    const balanced = studyFromObject({ ...base, data: { ...base.data, classWeights: 'balanced' }, goal: { metric: 'accuracy' } }, '.');
    expect(balanced.notes?.join('\n')).toMatch(/warning: data\.classWeights is "balanced" while the goal is accuracy/);
    expect(studyFromObject({ ...base, data: { ...base.data, classWeights: 'balanced' }, goal: { metric: 'macroF1' } }, '.').notes ?? []).toEqual([]);
    expect(studyFromObject({ ...base, goal: { metric: 'accuracy' } }, '.').notes ?? []).toEqual([]);
  });
});
