import { describe, expect, it } from 'vitest';
import { RUNAWAY_FACTOR, constantPredictionLoss, divergenceReason } from '../src/trainers/shared/divergence.js';

describe('divergence', () => {
  it('knows the loss of a constant prediction for each task', () => {
    // Standardised regression target: predicting its mean gives mean squared error 1 (the variance).
    expect(constantPredictionLoss('regression', 1)).toBe(1);
    // Source: the definition of log loss: predicting p = 1/2 costs -ln(1/2) = ln 2 per row; 1/k over k classes costs ln k.
    expect(constantPredictionLoss('binary', 1)).toBeCloseTo(0.6931472, 7);
    expect(constantPredictionLoss('multiclass', 4)).toBeCloseTo(Math.log(4), 12);
  });

  it('ends a trial whose loss is no longer finite, naming the 1-based epoch', () => {
    expect(divergenceReason(1, Infinity, 0.5, 'binary', 1)).toBe('training loss became Infinity at epoch 1');
    expect(divergenceReason(4, 0.3, NaN, 'binary', 1)).toBe('validation loss became NaN at epoch 4');
  });

  it(`ends a trial whose validation loss runs past ${RUNAWAY_FACTOR} times a constant prediction's (a documented project rule)`, () => {
    // Common practice (no source): the factor is this project's choice, documented in README and DEVELOPERS.md.
    expect(divergenceReason(7, 2.1, 1234, 'regression', 1)).toBe("validation loss ran away to 1230 at epoch 7 (more than 1000 times a constant prediction's 1)");
    expect(divergenceReason(7, 2.1, 999, 'regression', 1)).toBeUndefined();
    expect(divergenceReason(2, 0.7, 694, 'binary', 1)).toMatch(/ran away/);
    expect(divergenceReason(2, 0.7, 692, 'binary', 1)).toBeUndefined();
  });
});
