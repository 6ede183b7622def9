/**
 * The budget block at the end of `run` and `resume`: work planned against work done, time training
 * against waiting, and the epochs each rung took, from a successive-halving study on the closed-form
 * transport.
 */
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { runStudy } from '../src/runner/run-study.js';
import { budgetSummary, budgetSummaryText, twoSignificantDigits } from '../src/report/budget-summary.js';
import { studyResultJson } from '../src/report/study-result.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { ClosedFormTransport } from '../src/transports/closed-form.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

const figures = (params: TrialConfiguration, epoch: number) => {
  const loss = Math.abs(Math.log10(params.learningRate) + 2) + 4 / params.width + 2 / epoch;
  // Above the constant predictor's AUC of 0.5, so no trial is flagged no-lift (same order as the loss).
  return { validationLoss: loss, metrics: { auc: 0.5 + 0.5 / (1 + loss) } };
};

describe('the budget summary', () => {
  it('successive halving of 9 configurations, eta 3, 1 to 9 epochs: 13 of 13 jobs, 21 of 21 epochs, rungs of 9, 6 and 6 epochs, then 3 repeat runs of the one finished configuration', async () => {
    const definition = tinyStudy({
      budget: { trials: 9, maxEpochs: 9 },
      sampler: { kind: 'successive-halving', seed: 2, eta: 3, minEpochs: 1 },
      space: { depth: { min: 1, max: 2 }, width: { min: 4, max: 64, log: true }, activation: ['relu'], learningRate: { min: 0.001, max: 0.1 } },
    });
    const file = await writeTinyStudy(definition);
    const outcome = await runStudy(file, { out: path.join(path.dirname(file), 'run'), transport: () => new ClosedFormTransport({ capacity: 2, millisecondsPerEpoch: 0, evaluate: figures }) });
    const summary = budgetSummary(outcome.doc);
    // Source: Jamieson, Talwalkar, AISTATS 2016, as restated in Li et al., JMLR 2018: 9, 3, 1 configurations at 1, 3, 9 epochs;
    // a promoted trial continues from its checkpoint, so rung 1 adds 2 epochs each and rung 2 adds 6.
    // The repeat runs (default top 5, 3 seeds) take the configurations trained to the epoch limit: the one
    // of rung 2, 3 runs of 9 epochs each, counted in the plan and the work done.
    expect(summary.planned).toEqual({ trials: 9, jobs: 13 + 3, epochs: 21 + 27, limit: false });
    expect(summary.done).toEqual({ trials: 9, jobs: 13 + 3, epochs: 21 + 27 });
    expect(summary.repeats).toMatchObject({ planned: { jobs: 3, epochs: 27 }, done: { jobs: 3, epochs: 27 } });
    expect(summary.rungs.map((r) => [r.rung, r.epochs])).toEqual([[0, 9], [1, 6], [2, 6]]);
    expect(summary.session!.threads).toBe(2);
    expect(summary.session!.trainingSeconds + summary.session!.waitingSeconds).toBeCloseTo(2 * summary.session!.wallSeconds, 6);
    const text = budgetSummaryText(summary);
    expect(text).toMatch(/^work: 16 of 16 jobs planned, 48 of 48 epochs \(100 %\), 9 of 9 configurations$/m);
    expect(text).toMatch(/^repeat runs: 3 of 3 jobs, 27 of at most 27 epochs, /m);
    expect(text).toMatch(/^epochs by rung: rung 0 9 \(43 %\), rung 1 6 \(29 %\), rung 2 6 \(29 %\)$/m);
    // The closed form trains in no time, so the threads mostly wait: the summary says why.
    expect(summary.lowUtilisation.some((reason) => reason.startsWith('start-up'))).toBe(true);
    expect(summary.lowUtilisation.some((reason) => reason.startsWith('rung barriers'))).toBe(true);
    expect(studyResultJson(outcome.doc, outcome.ranking, outcome.file).budget).toEqual(summary);
  });

  it('shows a ratio with two significant digits', () => {
    expect([0.41421356, 0.05, 1, 0].map(twoSignificantDigits)).toEqual(['0.41', '0.050', '1.0', '0']);
  });
});
