import { RandomForestRegression } from 'ml-random-forest';
import { deriveSeed, permutation, stream, type Rng } from '../../random/streams.js';

/** One input of the decomposition: a continuous one on [0, 1] or a choice among `levels` values (coded 0..levels-1). */
export type InputKind = { kind: 'continuous' } | { kind: 'choice'; levels: number };

/** Predicts one value per row of inputs. */
export type Predictor = (rows: readonly number[][]) => number[];

/** Main effect of one input: its marginal (the prediction averaged over every other input) and its share of the variance. */
export interface MainEffect {
  input: number;
  /** Points where the marginal was evaluated: the midpoints of equal cells of [0, 1], or the choice codes. */
  at: number[];
  marginal: number[];
  /** Variance of the marginal over the input, divided by the prediction's total variance. */
  share: number;
}

export interface DecompositionOptions {
  /** Grid points for a continuous input. @default 17 */
  gridPoints?: number;
  /** Background configurations drawn to average the other inputs over. @default 256 */
  backgroundRows?: number;
  /** Stream for the background draw. */
  rng: Rng;
}

function variance(values: readonly number[]): number {
  const mean = values.reduce((s, v) => s + v, 0) / values.length;
  return values.reduce((s, v) => s + (v - mean) ** 2, 0) / values.length;
}

/**
 * Main-effect variance decomposition of a predictor over independent uniform inputs (functional
 * ANOVA's first-order terms): for input i, the marginal m_i(v) = E[f(x) | x_i = v], its variance
 * V_i over v, and the share V_i / Var[f]. The expectations are averages over one background sample
 * of the input space (Monte Carlo), the marginal's variance is taken over an even grid (continuous
 * inputs, equal weights) or over the choices (equally likely).
 * Source: Hutter, Hoos, Leyton-Brown, "An Efficient Approach for Assessing Hyperparameter Importance",
 * ICML 2014, section 3 (the quantity for main effects; the paper computes it exactly over each tree's
 * partition, this estimates it by sampling).
 */
export function mainEffects(predict: Predictor, inputs: readonly InputKind[], options: DecompositionOptions): { total: number; effects: MainEffect[] } {
  const gridPoints = options.gridPoints ?? 17;
  const rows = options.backgroundRows ?? 256;
  const draw = (input: InputKind): number => (input.kind === 'continuous' ? options.rng() : Math.min(input.levels - 1, Math.floor(options.rng() * input.levels)));
  const background = Array.from({ length: rows }, () => inputs.map(draw));
  const total = variance(predict(background));
  const effects = inputs.map((input, i): MainEffect => {
    const at = input.kind === 'continuous' ? Array.from({ length: gridPoints }, (_, k) => (k + 0.5) / gridPoints) : Array.from({ length: input.levels }, (_, k) => k);
    const batch = at.flatMap((value) => background.map((row) => row.map((x, j) => (j === i ? value : x))));
    const predictions = predict(batch);
    const marginal = at.map((_, k) => predictions.slice(k * rows, (k + 1) * rows).reduce((s, v) => s + v, 0) / rows);
    return { input: i, at, marginal, share: total > 0 ? variance(marginal) / total : 0 };
  });
  return { total, effects };
}

/**
 * The forest is fitted to at most this many configurations, a sample drawn with the study's seed: CART
 * training grows faster than the rows (3,000 trials took 14 s of a 17 s report, 10,000 took minutes),
 * and the main effects of a few hyperparameters are estimated well from a few hundred.
 */
export const FOREST_ROWS = 500;

export interface ForestOptions {
  /** Trees in the forest. @default 40 */
  trees?: number;
  /** The most configurations the forest is fitted to (a seeded sample beyond it). @default {@link FOREST_ROWS} */
  maxRows?: number;
  /** Key of the seeded streams for the forest and the background (e.g. the study seed and a purpose). */
  seedKey: (string | number)[];
}

/**
 * A regression forest (ml-random-forest: bagged CART trees on every input) fitted to the rows, as a
 * {@link Predictor}. Deterministic for a given seed key.
 */
export function fitForest(rows: readonly number[][], values: readonly number[], options: ForestOptions): Predictor {
  const forest = new RandomForestRegression({
    nEstimators: options.trees ?? 40,
    maxFeatures: rows[0]?.length ?? 1,
    replacement: true,
    useSampleBagging: true,
    noOOB: true,
    seed: deriveSeed(...options.seedKey, 'forest'),
    treeOptions: { minNumSamples: 2 },
  });
  const limit = options.maxRows ?? FOREST_ROWS;
  const chosen = rows.length > limit ? [...permutation(rows.length, stream(...options.seedKey, 'forest-sample')).subarray(0, limit)].sort((a, b) => a - b) : undefined;
  forest.train(
    chosen ? chosen.map((i) => [...rows[i]!]) : rows.map((r) => [...r]),
    chosen ? chosen.map((i) => values[i]!) : [...values],
  );
  return (query) => forest.predict(query.map((r) => [...r]));
}

/** Fit a forest to the rows and decompose its predictions (see {@link mainEffects}). */
export function forestImportance(
  rows: readonly number[][],
  values: readonly number[],
  inputs: readonly InputKind[],
  options: ForestOptions & { gridPoints?: number; backgroundRows?: number },
): { total: number; effects: MainEffect[] } {
  const predict = fitForest(rows, values, options);
  return mainEffects(predict, inputs, { ...options, rng: stream(...options.seedKey, 'background') });
}
