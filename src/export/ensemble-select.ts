/**
 * Greedy ensemble selection on the validation split (Caruana, Niculescu-Mizil, Crew and Ksikes,
 * "Ensemble Selection from Libraries of Models", ICML 2004, section 2 with selection with
 * replacement, section 2.1): start from the empty ensemble; each round add the library model (again,
 * if it was already in) whose addition gives the ensemble's averaged outputs the best validation
 * score; after a fixed number of rounds, return the nested ensemble (the one after some round) with
 * the best validation score. A model picked n times carries n times the weight of one picked once.
 */
import { beats, type Goal } from '../core/configuration.js';

/** The chosen ensemble. */
export interface EnsembleChoice {
  /** How many times each library model was picked, in library order (0: not in the ensemble). */
  counts: number[];
  /** The chosen ensemble's validation score. */
  score: number;
  /** The score after each round (the nested ensembles), round 1 first. */
  scores: number[];
  /** The round whose ensemble was chosen (1-based). */
  round: number;
}

/**
 * The weighted mean of the library's outputs, each model's weight its count over the total count.
 * Outputs are row-major and of one length (probabilities for classification, predictions for regression).
 */
export function averageOutputs(library: readonly Float32Array[], counts: readonly number[]): Float32Array {
  const total = counts.reduce((sum, count) => sum + count, 0);
  if (library.length === 0 || total === 0) throw new Error('an ensemble needs at least one member');
  const sum = new Float64Array(library[0]!.length);
  library.forEach((outputs, m) => {
    const count = counts[m] ?? 0;
    if (count > 0) for (let i = 0; i < sum.length; i++) sum[i]! += count * outputs[i]!;
  });
  return Float32Array.from(sum, (value) => value / total);
}

/** The library model whose addition scores best (ties: the earlier model), with that score. */
function bestAddition(library: readonly Float32Array[], sum: Float64Array, size: number, scoreOf: (outputs: Float32Array) => number, better: Goal['better']): { model: number; score: number } {
  let chosen = { model: -1, score: Number.NaN };
  const trial = new Float32Array(sum.length);
  library.forEach((outputs, m) => {
    for (let i = 0; i < sum.length; i++) trial[i] = (sum[i]! + outputs[i]!) / (size + 1);
    const score = scoreOf(trial);
    if (chosen.model < 0 || beats(score, chosen.score, better)) chosen = { model: m, score };
  });
  return chosen;
}

/**
 * Forward selection with replacement from `library` (each entry: one model's outputs on the
 * validation rows) for `rounds` rounds, scored by `scoreOf` (higher or lower is better as `better`
 * says). Ties between models go to the earlier one (list the library best first), ties between nested
 * ensembles to the smaller one.
 * @throws Error for an empty library or fewer than one round.
 */
export function selectEnsemble(library: readonly Float32Array[], scoreOf: (outputs: Float32Array) => number, better: Goal['better'], rounds: number): EnsembleChoice {
  if (library.length === 0) throw new Error('ensemble selection needs at least one model');
  if (!Number.isInteger(rounds) || rounds < 1) throw new Error(`ensemble selection needs at least one round, got ${rounds}`);
  const sum = new Float64Array(library[0]!.length);
  const counts = library.map(() => 0);
  const scores: number[] = [];
  let best: EnsembleChoice | undefined;
  for (let round = 1; round <= rounds; round++) {
    const added = bestAddition(library, sum, round - 1, scoreOf, better);
    counts[added.model]! += 1;
    const outputs = library[added.model]!;
    for (let i = 0; i < sum.length; i++) sum[i]! += outputs[i]!;
    scores.push(added.score);
    if (!best || beats(added.score, best.score, better)) best = { counts: [...counts], score: added.score, scores: [], round };
  }
  return { ...best!, scores };
}
