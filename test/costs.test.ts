/**
 * The cost goal: the least-cost threshold and the least-expected-cost decision worked by hand, the
 * study definition's `data.costs`, and a tiny study run with costs, exported and predicted.
 */
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { exportModel, exportReport } from '../src/commands/export.js';
import { predictCsv } from '../src/commands/predict.js';
import { ranking } from '../src/commands/ranking.js';
import { run } from '../src/commands/run.js';
import { UserError } from '../src/core/errors.js';
import { costMatrixFor } from '../src/data/costs.js';
import { readConfiguration } from '../src/export/configuration.js';
import { chooseThreshold } from '../src/export/threshold.js';
import {
  constantPredictionCost,
  costAtThreshold,
  costMetric,
  leastCostThreshold,
  leastExpectedCostClasses,
  type CostMatrix,
} from '../src/metrics/costs.js';
import { rankingTable } from '../src/report/ranking-table.js';
import { formatNumber } from '../src/report/format.js';
import { resolveGoal, resolveThresholdRule } from '../src/study/definition.js';
import { validateStudy } from '../src/study/load.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

// The validation rows of test/export.threshold.test.ts: scores high to low with labels
// 0.9+ 0.8+ 0.7- 0.6+ 0.5- 0.4- 0.3+ 0.2- (4 positives, 4 negatives).
const labels = [1, 1, 0, 1, 0, 0, 1, 0];
const scores = [0.9, 0.8, 0.7, 0.6, 0.5, 0.4, 0.3, 0.2];
/** matrix[actual][predicted]: a missed failure costs 5, a needless inspection 1, a right call 0. */
const missCostly: CostMatrix = [
  [0, 1],
  [5, 0],
];

describe('the least-cost threshold of a binary model', () => {
  // Worked by hand, cost = 5 FN + 1 FP over 8 rows (FN = 4 - TP, FP as counted):
  //   none (0.95): FN 4 -> 20 -> 2.5    0.9: 15 -> 1.875   0.8: 10 -> 1.25   0.7: 11 -> 1.375
  //   0.6: 6 -> 0.75   0.5: 7 -> 0.875   0.4: 8 -> 1   0.3: 3 -> 0.375   0.2: 4 -> 0.5
  // Common practice (no source): the expected cost per row is the mean of the rows' cell costs.
  it('takes 0.3 at 0.375 per row when a miss costs 5 and a false alarm 1', () => {
    expect(leastCostThreshold(labels, scores, missCostly)).toEqual({ threshold: 0.3, costPerRow: 0.375 });
    expect(costAtThreshold(labels, scores, missCostly, 0.6)).toBe(0.75);
    expect(costAtThreshold(labels, scores, missCostly, 0.95)).toBe(2.5);
  });

  it('takes 0.8 at 0.25 per row when the costs are the other way round (cost = FN + 5 FP)', () => {
    // none: 4 -> 0.5   0.9: 3 -> 0.375   0.8: 2 -> 0.25   0.7: 7   0.6: 6   below: larger.
    expect(leastCostThreshold(labels, scores, [[0, 5], [1, 0]])).toEqual({ threshold: 0.8, costPerRow: 0.25 });
  });

  it('counts a gain as a negative cost: a caught failure saving 10 gives 0.3 at -4.625 per row', () => {
    // 0.3: -10*4 + 5*0 + 3 = -37 -> -4.625; 0.2: -40 + 4 = -36; 0.6: -30 + 5 + 1 = -24.
    expect(leastCostThreshold(labels, scores, [[0, 1], [5, -10]])).toEqual({ threshold: 0.3, costPerRow: -4.625 });
  });

  it('predicts no row as the second class when every call of it costs more than it saves', () => {
    // The highest score is a negative row: any call of the second class costs at least 100; none costs 2 misses at 1 over 4 rows.
    const choice = leastCostThreshold([0, 1, 0, 1], [0.9, 0.8, 0.7, 0.6], [[0, 100], [1, 0]]);
    expect(choice).toEqual({ threshold: 0.95, costPerRow: 0.5 });
    expect(costAtThreshold([0, 1, 0, 1], [0.9, 0.8, 0.7, 0.6], [[0, 100], [1, 0]], choice.threshold)).toBe(0.5);
  });

  it('handles rows without the second class (predict nothing positive: cost 0)', () => {
    expect(leastCostThreshold([0, 0, 0], [0.9, 0.5, 0.1], missCostly).costPerRow).toBe(0);
  });

  it('the export rule least-cost picks the same threshold and reports its precision, recall and cost', () => {
    const choice = chooseThreshold({ choose: 'least-cost' }, labels, scores, missCostly);
    expect(choice).toMatchObject({ threshold: 0.3, costPerRow: 0.375, precision: 4 / 7, recall: 1, ruleMet: true, rows: 8 });
    // Another rule keeps its own threshold and reports the cost there: largest F1 takes 0.6 (0.75 per row).
    expect(chooseThreshold({ choose: 'largest-f1' }, labels, scores, missCostly)).toMatchObject({ threshold: 0.6, costPerRow: 0.75 });
  });

  it('the constant predictor: "always inspect" costs 0.5 per row, "never" 2.5; the cheaper is taken', () => {
    expect(constantPredictionCost(labels, 2, missCostly)).toEqual({ predicted: 1, costPerRow: 0.5 });
  });
});

describe('the class of least expected cost', () => {
  // Source: Elkan, "The Foundations of Cost-Sensitive Learning", IJCAI 2001, Section 2: predict the
  // class j minimising sum_i P(i|x) C(i, j); for two classes that is predicting the second class when
  // p >= p* = (C10 - C00) / (C10 - C00 + C01 - C11) in Elkan's notation (C(predicted, actual)), here
  // (m[0][1] - m[0][0]) / (m[0][1] - m[0][0] + m[1][0] - m[1][1]) = 1 / (1 + 5) = 1/6.
  it('for two classes flips at Elkan\'s threshold p* = 1/6 when a miss costs 5 and a false alarm 1', () => {
    const pStar = 1 / 6;
    const below = pStar - 1e-9;
    const above = pStar + 1e-9;
    expect(Array.from(leastExpectedCostClasses([1 - below, below, 1 - above, above], 2, missCostly))).toEqual([0, 1]);
    // With costs 3 and 2 (and a right call of the second class saving 1): p* = 2 / (2 + 3 + 1) = 1/3.
    const matrix: CostMatrix = [[0, 2], [3, -1]];
    expect(Array.from(leastExpectedCostClasses([0.67, 0.33, 0.66, 0.34], 2, matrix))).toEqual([0, 1]);
  });

  // Worked by hand with m = [[0,1,1],[10,0,1],[10,10,0]] (missing class 1 or 2 costs 10):
  //   row 0 p=(0.8,0.1,0.1), true 0: expected 2.0 / 1.8 / 0.9 -> class 2, cost 1
  //   row 1 p=(0.5,0.4,0.1), true 1: expected 5.0 / 1.5 / 0.9 -> class 2, cost 1
  //   row 2 p=(0.97,0.02,0.01), true 0: expected 0.3 / 1.07 / 0.99 -> class 0, cost 0
  // Mean 2/3 per row; the largest probability (class 0 every time) would cost 10/3.
  it('for three classes chooses by expected cost, not by the largest probability (hand-worked)', () => {
    const matrix: CostMatrix = [[0, 1, 1], [10, 0, 1], [10, 10, 0]];
    const probabilities = [0.8, 0.1, 0.1, 0.5, 0.4, 0.1, 0.97, 0.02, 0.01];
    expect(Array.from(leastExpectedCostClasses(probabilities, 3, matrix))).toEqual([2, 2, 0]);
    expect(costMetric([0, 1, 0], probabilities, 3, matrix)).toBeCloseTo(2 / 3, 12);
  });
});

const valid = {
  name: 'pumps',
  data: { csv: 'pumps.csv', target: 'fails', task: 'binary', costs: { unit: 'EUR', cells: [{ actual: 'yes', predicted: 'no', cost: 800 }, { actual: 'no', predicted: 'yes', cost: 40 }] } },
  space: { depth: { min: 1, max: 2 }, width: { min: 4, max: 16 }, activation: ['relu'], learningRate: { min: 1e-3, max: 0.1 } },
  budget: { trials: 4, maxEpochs: 3 },
};

function messageOf(raw: unknown): string {
  try {
    validateStudy(raw, 'study.json');
  } catch (error) {
    if (error instanceof UserError) return error.message;
    throw error;
  }
  throw new Error('expected a UserError');
}

describe('data.costs in the study definition', () => {
  it('makes cost the default goal (lower is better) and least-cost the default threshold rule', () => {
    const definition = validateStudy(valid, 'study.json');
    expect(resolveGoal(definition)).toEqual({ metric: 'cost', better: 'lower' });
    expect(resolveThresholdRule(definition)).toEqual({ choose: 'least-cost' });
    const ruled = validateStudy({ ...valid, decisionThreshold: { choose: 'largest-f1' }, goal: { metric: 'auc' } }, 'study.json');
    expect(resolveThresholdRule(ruled)).toEqual({ choose: 'largest-f1' });
    expect(resolveGoal(ruled).metric).toBe('auc');
  });

  it('refuses costs for regression, a cell given twice, and a cost goal or least-cost rule without costs', () => {
    expect(messageOf({ ...valid, data: { ...valid.data, task: 'regression' } })).toMatch(/^study\.json: data\.costs: is for classification/m);
    const twice = { ...valid.data.costs, cells: [...valid.data.costs.cells, { actual: 'yes', predicted: 'no', cost: 1 }] };
    expect(messageOf({ ...valid, data: { ...valid.data, costs: twice } })).toMatch(/data\.costs\.cells\[2\]: gives actual "yes", predicted "no" a second time/);
    const { costs: _dropped, ...plain } = valid.data;
    expect(messageOf({ ...valid, data: plain, goal: { metric: 'cost' } })).toMatch(/goal\.metric: "cost" needs data\.costs/);
    expect(messageOf({ ...valid, data: plain, decisionThreshold: { choose: 'least-cost' } })).toMatch(/decisionThreshold\.choose: "least-cost" needs data\.costs/);
  });

  it('refuses a cost that is not a number and a cell without its class', () => {
    expect(messageOf({ ...valid, data: { ...valid.data, costs: { cells: [{ actual: 'yes', predicted: 'no', cost: 'high' }] } } })).toMatch(/data\.costs\.cells\[0\]\.cost: found "high", expected a number/);
    expect(messageOf({ ...valid, data: { ...valid.data, costs: { cells: [{ actual: 'yes', cost: 1 }] } } })).toMatch(/data\.costs\.cells\[0\]\.predicted/);
  });

  it('maps the cells onto the classes in output order and names a label the target does not hold', () => {
    expect(costMatrixFor(valid.data.costs, ['no', 'yes'], 'fails', 'study.json')).toEqual([[0, 40], [800, 0]]);
    expect(() => costMatrixFor({ cells: [{ actual: 'Yes', predicted: 'no', cost: 1 }] }, ['no', 'yes'], 'fails', 'study.json')).toThrow(
      /^study\.json: data\.costs\.cells\[0\]\.actual: 'Yes' is not a class of column 'fails'; expected one of 'no', 'yes'$/,
    );
  });
});

describe('a tiny study with costs', () => {
  const costs = { unit: 'EUR', cells: [{ actual: 'yes', predicted: 'no', cost: 800 }, { actual: 'no', predicted: 'yes', cost: 40 }] };

  it('reports cost every epoch, ranks by it, exports the least-cost threshold and predict applies it', async () => {
    const base = tinyStudy();
    const { goal: _auc, ...rest } = base;
    const definition = await writeTinyStudy({ ...rest, data: { ...base.data, costs } });
    const out = path.join(path.dirname(definition), 'run');
    await run({ definition, out, progress: false });

    const { doc, ranking: ranked } = await ranking({ dir: out });
    expect(doc.goal).toEqual({ metric: 'cost', better: 'lower' });
    for (const trial of doc.trials) for (const point of trial.curve) expect(point.metrics.cost).toBeGreaterThanOrEqual(0);
    const scores = ranked.filter((entry) => entry.trial.score !== undefined).map((entry) => entry.trial.score!);
    expect(scores).toEqual([...scores].sort((a, b) => a - b));
    const table = rankingTable(ranked, doc.goal).split('\n');
    expect(table[0]).toMatch(/cost +cost per 1,000 rows/);
    const first = ranked[0]!.trial.score!;
    expect(table[2]).toContain(formatNumber(first * 1000));

    const summary = await exportModel({ dir: out });
    const configuration = await readConfiguration(summary.out);
    expect(configuration.costs).toMatchObject({ unit: 'EUR', matrix: [[0, 40], [800, 0]], decision: 'threshold' });
    // 60/60 rows: always predicting "yes" costs 40 per "no" row, always "no" 800 per "yes" row, so "yes" is the constant choice at about 20 per row.
    expect(configuration.costs!.constant.predicted).toBe('yes');
    expect(configuration.costs!.constant.costPerRow).toBeGreaterThan(0);
    const outputs = configuration.outputs as { threshold: number; thresholdChoice: { rule: unknown; costPerRow: number } };
    expect(outputs.thresholdChoice.rule).toEqual({ choose: 'least-cost' });
    // Exported from the kept checkpoint on the same validation rows, the least-cost threshold's cost is the study's score.
    expect(outputs.thresholdChoice.costPerRow).toBeCloseTo(summary.score, 6);
    const text = exportReport(summary);
    expect(text).toMatch(/decision threshold: [0-9.]+ \(least cost per row\)/);
    expect(text).toMatch(/cost \(EUR\): validation [0-9.]+ per row, [0-9.,]+ per 1,000 rows/);
    expect(text).toMatch(/predicting 'yes' for every row would cost [0-9.]+ per row/);

    const csv = path.join(path.dirname(definition), 'tiny.csv');
    const predictions = path.join(path.dirname(definition), 'predicted.csv');
    const predicted = await predictCsv({ model: summary.out, data: csv, output: predictions });
    expect(predicted.threshold).toBe(outputs.threshold);
    const [header, ...lines] = (await readFile(predictions, 'utf8')).trim().split('\n');
    const at = header!.split(',').indexOf('p_yes');
    for (const line of lines) {
      const cells = line.split(',');
      expect(cells[1]).toBe(Number(cells[at]) >= outputs.threshold ? 'yes' : 'no');
    }
  });
});
