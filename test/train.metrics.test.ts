import { describe, expect, it } from 'vitest';
import { accuracy, auc, binaryLogLoss, computeMetrics, macroF1, multiclassLogLoss, regressionMetrics } from '../src/metrics/metrics.js';

describe('classification metrics', () => {
  it('accuracy is the share of matching classes', () => {
    expect(accuracy([0, 1, 2, 1], [0, 1, 1, 1])).toBe(0.75);
  });

  it('macro-F1 averages per-class F1, scoring 0 for a class never predicted and skipping a class never seen', () => {
    // true (0,0,1,1,2), predicted (0,1,1,1,0):
    // class 0: TP 1, FP 1, FN 1 -> 2/4 = 0.5; class 1: TP 2, FP 1, FN 0 -> 4/5 = 0.8;
    // class 2: TP 0, FP 0, FN 1 -> 0; mean (0.5 + 0.8 + 0) / 3 = 0.433333
    expect(macroF1([0, 0, 1, 1, 2], [0, 1, 1, 1, 0], 3)).toBeCloseTo(1.3 / 3, 12);
    // class 3 has no rows and no predictions: skipped, not counted as 0
    expect(macroF1([0, 0, 1, 1, 2], [0, 1, 1, 1, 0], 4)).toBeCloseTo(1.3 / 3, 12);
  });

  it('AUC counts a positive-negative tie as half', () => {
    // positives score 0.9 and 0.4, negatives 0.4 and 0.1. Pairs (pos, neg):
    // (0.9, 0.4) 1, (0.9, 0.1) 1, (0.4, 0.4) 0.5, (0.4, 0.1) 1 -> 3.5 / 4 = 0.875
    expect(auc([1, 0, 1, 0], [0.9, 0.4, 0.4, 0.1])).toBe(0.875);
    expect(auc([1, 1, 0, 0], [0.9, 0.8, 0.3, 0.1])).toBe(1);
    expect(auc([1, 1, 0, 0], [0.1, 0.2, 0.3, 0.4])).toBe(0);
  });

  it('AUC is undefined (NaN) when only one class is present', () => {
    expect(auc([1, 1], [0.2, 0.3])).toBeNaN();
  });

  it('binary log loss matches the reference values', () => {
    // Source: REFERENCES.md, loss and output functions (derived): p 0.9, y 1 -> 0.1053605; y 0 -> 2.3025851
    expect(binaryLogLoss([1], [0.9])).toBeCloseTo(0.1053605, 7);
    expect(binaryLogLoss([0], [0.9])).toBeCloseTo(2.3025851, 7);
    expect(binaryLogLoss([1, 0], [0.9, 0.9])).toBeCloseTo((0.1053605 + 2.3025851) / 2, 7);
  });

  it('log loss clips probabilities to [1e-7, 1 - 1e-7]', () => {
    // -ln(1e-7) = 16.1180957
    expect(binaryLogLoss([1], [0])).toBeCloseTo(16.1180957, 6);
    expect(multiclassLogLoss([2], [0.5, 0.5, 0], 3)).toBeCloseTo(16.1180957, 6);
  });

  it('multiclass log loss is the cross-entropy of the true class', () => {
    // Source: REFERENCES.md: softmax of (2, 1, 0.1) is (0.6590, 0.2424, 0.0986); cross-entropy for class 0 is 0.4170
    expect(multiclassLogLoss([0], [0.659, 0.2424, 0.0986], 3)).toBeCloseTo(0.417, 3);
  });
});

describe('regression metrics', () => {
  it('RMSE, MAE and R² of (1, 2, 3) against (1, 2, 5)', () => {
    // errors (0, 0, -2): MSE 4/3 (REFERENCES.md), RMSE sqrt(4/3), MAE 2/3;
    // mean 8/3, SS_tot = (25 + 4 + 49) / 9 = 78/9, R² = 1 - 4 / (78/9) = 1 - 36/78
    const m = regressionMetrics([1, 2, 5], [1, 2, 3]);
    expect(m.rmse).toBeCloseTo(Math.sqrt(4 / 3), 12);
    expect(m.mae).toBeCloseTo(2 / 3, 12);
    expect(m.r2).toBeCloseTo(1 - 36 / 78, 12);
  });

  it('computeMetrics reports regression in the target units, undoing the standardisation', () => {
    // standardised (1, 2, 5) and (1, 2, 3) with mean 10, std 2 are (12, 14, 20) and (12, 14, 16):
    // every error doubles, R² is unchanged
    const m = computeMetrics('regression', Float32Array.of(1, 2, 5), Float32Array.of(1, 2, 3), 1, { mean: 10, std: 2 });
    expect(m.rmse).toBeCloseTo(2 * Math.sqrt(4 / 3), 6);
    expect(m.mae).toBeCloseTo(4 / 3, 6);
    expect(m.r2).toBeCloseTo(1 - 36 / 78, 6);
  });
});

describe('computeMetrics for classification', () => {
  it('binary thresholds P(class 1) at 0.5 and reports accuracy, macro-F1, AUC and log loss', () => {
    const m = computeMetrics('binary', Float32Array.of(1, 0, 1, 0), Float32Array.of(0.9, 0.4, 0.4, 0.1), 1);
    // predicted (1, 0, 0, 0): accuracy 3/4; class 0 F1 = 4/5, class 1 F1 = 2/3
    expect(m.accuracy).toBe(0.75);
    expect(m.macroF1).toBeCloseTo((4 / 5 + 2 / 3) / 2, 6);
    expect(m.auc).toBe(0.875);
    expect(m.logLoss).toBeCloseTo((-Math.log(0.9) - Math.log(0.6) - Math.log(0.4) - Math.log(0.9)) / 4, 6);
  });

  it('multiclass takes the argmax of each row and omits AUC', () => {
    const probabilities = Float32Array.of(0.7, 0.2, 0.1, 0.1, 0.3, 0.6);
    const m = computeMetrics('multiclass', Float32Array.of(0, 1), probabilities, 3);
    expect(m.accuracy).toBe(0.5);
    expect(m.auc).toBeUndefined();
    expect(m.logLoss).toBeCloseTo((-Math.log(0.7) - Math.log(0.3)) / 2, 6);
  });

  it('omits AUC rather than reporting NaN when the validation split holds one class', () => {
    const m = computeMetrics('binary', Float32Array.of(1, 1), Float32Array.of(0.8, 0.3), 1);
    expect('auc' in m).toBe(false);
    expect(m.accuracy).toBe(0.5);
  });
});
