import { describe, expect, it } from 'vitest';
import { averageOutputs, selectEnsemble } from '../src/export/ensemble-select.js';

/** Mean squared error against the truth [0, 0]. */
const mseToZero = (outputs: Float32Array): number => outputs.reduce((sum, value) => sum + value * value, 0) / outputs.length;

describe('greedy ensemble selection', () => {
  // Source: Caruana, Niculescu-Mizil, Crew and Ksikes, "Ensemble Selection from Libraries of Models",
  // ICML 2004, section 2 (forward selection from the empty ensemble, return the best nested ensemble)
  // and 2.1 (selection with replacement). The case is worked by hand:
  // truth [0, 0]; A = [2, -2] (MSE 4), B = [-1, 1] (MSE 1), C = [3, 3] (MSE 9).
  // Round 1: B (MSE 1).
  // Round 2: B+A = [0.5, -0.5] MSE 0.25; B+B = B MSE 1; B+C = [1, 2] MSE 2.5  -> A, {A, B} 0.25.
  // Round 3: +A = [1, -1] MSE 1; +B = [0, 0] MSE 0; +C = [4/3, 2/3] MSE 10/9  -> B again, {A, 2B} 0.
  // Round 4: +A = [0.5, -0.5] MSE 0.25; +B = [-0.25, 0.25] MSE 0.0625; +C = [0.75, 0.75] MSE 0.5625 -> B, 0.0625.
  // The best nested ensemble is round 3's: A once, B twice (weights 1/3 and 2/3), MSE 0.
  const library = [Float32Array.of(2, -2), Float32Array.of(-1, 1), Float32Array.of(3, 3)];

  it('picks with replacement and returns the best nested ensemble', () => {
    const choice = selectEnsemble(library, mseToZero, 'lower', 4);
    expect(choice.scores).toEqual([1, 0.25, 0, 0.0625]);
    expect(choice.round).toBe(3);
    expect(choice.counts).toEqual([1, 2, 0]);
    expect(choice.score).toBe(0);
    expect(Array.from(averageOutputs(library, choice.counts))).toEqual([0, 0]);
  });

  it('follows the goal\'s direction: with higher-is-better it maximises', () => {
    // Score = MSE, higher taken as better: round 1 takes C (9), and adding anything to C lowers it, so
    // C alone is the best nested ensemble (worked by hand: C+C = 9, C+A = [2.5, 0.5] 3.25, C+B = [1, 2] 2.5).
    const choice = selectEnsemble(library, mseToZero, 'higher', 2);
    expect(choice.scores).toEqual([9, 9]);
    expect(choice.round).toBe(1);
    expect(choice.counts).toEqual([0, 0, 1]);
  });

  it('gives ties to the earlier model', () => {
    const twins = [Float32Array.of(1, 1), Float32Array.of(1, 1)];
    expect(selectEnsemble(twins, mseToZero, 'lower', 1).counts).toEqual([1, 0]);
  });

  it('weights members by their counts', () => {
    expect(Array.from(averageOutputs([Float32Array.of(0, 3), Float32Array.of(3, 0)], [2, 1]))).toEqual([1, 2]);
    expect(() => averageOutputs(library, [0, 0, 0])).toThrow(/at least one member/);
    expect(() => selectEnsemble([], mseToZero, 'lower', 3)).toThrow(/at least one model/);
  });
});
