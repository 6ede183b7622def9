/**
 * Per-class figures against published examples of a general-purpose reference library and
 * confusion matrices worked by hand; and the figures a job brings back from either trainer.
 */
import { describe, expect, it } from 'vitest';
import { classFigures, confusionMatrix, perClassFigures, summaryAveragePrecision } from '../src/metrics/class-figures.js';
import { averagePrecision, precisionRecallCurve } from '../src/metrics/precision-recall.js';
import { runTrainRequest } from '../src/trainers/run-request.js';
import { syntheticDataset, trainRequest } from './helpers/synthetic.js';

describe('average precision', () => {
  it('is 0.83 for labels 0,0,1,1 scored 0.1, 0.4, 0.35, 0.8', () => {
    // Source: scikit-learn documentation, sklearn.metrics.average_precision_score, Examples (the same
    // labels and scores); AP = sum_n (R_n - R_(n-1)) P_n as the page states it: 0.5 x 1 + 0 x 0.5 + 0.5 x 2/3 = 5/6 (derived).
    expect(averagePrecision([0, 0, 1, 1], [0.1, 0.4, 0.35, 0.8])).toBeCloseTo(5 / 6, 12);
  });

  it('is step-wise, not interpolated: each point of the curve weighs its precision by its gain in recall', () => {
    // Source: Davis and Goadrich, "The Relationship Between Precision-Recall and ROC Curves", ICML 2006, section 4
    // (linear interpolation between PR points overstates the area); worked by hand:
    // ranked labels 1, 0, 0, 1: points (R 0.5, P 1), (R 0.5, P 0.5), (R 0.5, P 1/3), (R 1, P 0.5) -> 0.5 + 0.25 = 0.75.
    expect(averagePrecision([1, 0, 0, 1], [0.9, 0.8, 0.7, 0.6])).toBeCloseTo(0.75, 12);
    expect(precisionRecallCurve([1, 0, 0, 1], [0.9, 0.8, 0.7, 0.6]).map((p) => [p.recall, p.precision])).toEqual([
      [0.5, 1],
      [0.5, 0.5],
      [0.5, 1 / 3],
      [1, 0.5],
    ]);
  });

  it('counts tied scores as one threshold', () => {
    // Worked by hand: scores 0.5, 0.5 (one positive, one negative) and 0.2 (positive): points (R 0.5, P 0.5), (R 1, P 2/3).
    expect(averagePrecision([1, 0, 1], [0.5, 0.5, 0.2])).toBeCloseTo(0.5 * 0.5 + 0.5 * (2 / 3), 12);
  });

  it('is undefined without a positive row', () => {
    expect(averagePrecision([0, 0], [0.2, 0.4])).toBeNaN();
  });
});

describe('precision, recall and F1 per class', () => {
  it('match the published cat, dog, pig example', () => {
    // Source: scikit-learn documentation, sklearn.metrics.precision_recall_fscore_support, Examples:
    // y_true cat dog pig cat dog pig, y_pred cat pig dog cat cat dog; average=None with labels
    // pig, dog, cat gives precision (0, 0, 0.67), recall (0, 0, 1), F1 (0, 0, 0.8), support (2, 2, 2);
    // the macro averages are 0.22, 0.33 and 0.27.
    const classes = ['cat', 'dog', 'pig'];
    const index = (labels: string[]): number[] => labels.map((label) => classes.indexOf(label));
    const truth = index(['cat', 'dog', 'pig', 'cat', 'dog', 'pig']);
    const predicted = index(['cat', 'pig', 'dog', 'cat', 'cat', 'dog']);
    const rows = perClassFigures({ confusion: confusionMatrix(truth, predicted, 3), averagePrecision: [null, null, null] }, classes);
    expect(rows.map((r) => r.rows)).toEqual([2, 2, 2]);
    expect(rows[0]!.precision).toBeCloseTo(2 / 3, 12);
    expect(rows[0]!.recall).toBe(1);
    expect(rows[0]!.f1).toBeCloseTo(0.8, 12);
    expect(rows.slice(1).map((r) => [r.precision, r.recall, r.f1])).toEqual([[0, 0, 0], [0, 0, 0]]);
    const mean = (key: 'precision' | 'recall' | 'f1'): number => rows.reduce((s, r) => s + r[key], 0) / 3;
    expect(mean('precision')).toBeCloseTo(0.2222, 4);
    expect(mean('recall')).toBeCloseTo(0.3333, 4);
    expect(mean('f1')).toBeCloseTo(0.2667, 4);
  });

  it('follow a hand-worked binary confusion matrix at the 0.5 threshold', () => {
    // Worked by hand: 10 rows, 3 positives. Probabilities: positives 0.9, 0.6, 0.3; negatives 0.7, 0.4, 0.2 x5.
    // At 0.5: TP 2, FN 1, FP 1, TN 6; positive precision 2/3, recall 2/3; negative precision 6/7, recall 6/7.
    const y = Float32Array.from([1, 1, 1, 0, 0, 0, 0, 0, 0, 0]);
    const p = Float32Array.from([0.9, 0.6, 0.3, 0.7, 0.4, 0.2, 0.2, 0.2, 0.2, 0.2]);
    const figures = classFigures('binary', y, p, 1, 7)!;
    expect(figures.confusion).toEqual([
      [6, 1],
      [1, 2],
    ]);
    expect(figures).toMatchObject({ epoch: 7, threshold: 0.5 });
    const [negative, positive] = perClassFigures(figures, ['no', 'yes']);
    expect(positive!.precision).toBeCloseTo(2 / 3, 12);
    expect(positive!.recall).toBeCloseTo(2 / 3, 12);
    expect(negative!.f1).toBeCloseTo(6 / 7, 12);
    // Positive AP by hand: ranked 0.9+ 0.7- 0.6+ 0.4- 0.3+ ...: (1/3) x 1 + (1/3) x 2/3 + (1/3) x 3/5.
    expect(figures.averagePrecision[1]).toBeCloseTo((1 + 2 / 3 + 3 / 5) / 3, 6);
    expect(summaryAveragePrecision('binary', figures.averagePrecision)).toBe(figures.averagePrecision[1]);
  });

  it('counts a multiclass prediction as the most probable class', () => {
    const y = Float32Array.from([0, 1, 2, 2]);
    const p = Float32Array.from([0.7, 0.2, 0.1, 0.1, 0.3, 0.6, 0.2, 0.2, 0.6, 0.5, 0.4, 0.1]);
    const figures = classFigures('multiclass', y, p, 3, 1)!;
    expect(figures.confusion).toEqual([
      [1, 0, 0],
      [0, 0, 1],
      [1, 0, 1],
    ]);
    expect(figures.threshold).toBeUndefined();
    expect(classFigures('regression', y, p, 1, 1)).toBeUndefined();
  });
});

describe('figures a job brings back', () => {
  for (const trainer of ['engine', 'tfjs'] as const) {
    it(`${trainer}: a classification job returns its validation confusion matrix and per-class average precision at its last epoch`, async () => {
      const dataset = syntheticDataset({ task: 'multiclass', rows: 120, inputs: 4, classes: 3, seed: 3 });
      const result = await runTrainRequest(trainRequest(dataset, { toEpoch: 2, trainer }));
      const figures = result.classFigures!;
      expect(figures.epoch).toBe(2);
      expect(figures.confusion.flat().reduce((a, b) => a + b, 0)).toBe(dataset.validation.rows);
      const hits = figures.confusion.reduce((sum, row, c) => sum + row[c]!, 0);
      expect(hits / dataset.validation.rows).toBeCloseTo(result.epochs.at(-1)!.metrics.accuracy!, 12);
      expect(figures.averagePrecision.every((ap) => ap !== null && ap > 0 && ap <= 1)).toBe(true);
    });
  }

  it('a regression job brings none', async () => {
    const result = await runTrainRequest(trainRequest(syntheticDataset({ task: 'regression', rows: 60 }), { toEpoch: 1 }));
    expect(result.classFigures).toBeUndefined();
  });
});
