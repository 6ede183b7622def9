/**
 * An ensemble of the study's top networks, chosen by greedy selection on the validation split
 * (`ensemble-select.ts`): each library network's outputs on the validation and test rows from its
 * kept checkpoint, the goal's score of averaged outputs, and the figures of the chosen ensemble.
 */
import type * as tf from '@tensorflow/tfjs';
import type { NamedWeights } from '../checkpoints/format.js';
import type { Goal, MetricName } from '../core/configuration.js';
import type { RankedTrial } from '../core/ranking.js';
import { unscaleTarget } from '../data/recipe.js';
import type { PreprocessingRecipe, SplitArrays } from '../data/types.js';
import { costMetric, type CostMatrix } from '../metrics/costs.js';
import { computeMetrics, regressionMetrics, type Metrics } from '../metrics/metrics.js';
import { averageOutputs, selectEnsemble, type EnsembleChoice } from './ensemble-select.js';
import { buildLayersModel, outputCount, predictRows } from './model-files.js';

/** Rounds of selection per library network: enough for weights in steps of a quarter of one network's share. Common practice (no source). */
export const ROUNDS_PER_LIBRARY_NETWORK = 4;

/** One library network: its ranked trial, weights, and outputs on the validation and test rows. */
export interface LibraryNetwork {
  ranked: RankedTrial;
  weights: NamedWeights[];
  validation: Float32Array;
  test: Float32Array;
}

/** The metrics of outputs on a split (regression outputs are in the target's units; a binary class at `threshold`; the cost with a cost matrix). */
export function metricsOfOutputs(recipe: PreprocessingRecipe, split: SplitArrays, outputs: Float32Array, threshold = 0.5, costs?: CostMatrix): Metrics {
  const columns = outputCount(recipe);
  const metrics =
    recipe.task === 'regression'
      ? regressionMetrics(Float64Array.from(split.y, (y) => unscaleTarget(recipe, y)), outputs)
      : computeMetrics(recipe.task, split.y, outputs, columns, undefined, threshold);
  if (costs) metrics.cost = costMetric(Int32Array.from(split.y), outputs, columns, costs, recipe.task === 'binary' ? threshold : undefined);
  return metrics;
}

/** The metric greedy selection scores by: the goal's, with `validationLoss` read as log loss (classification) or RMSE (regression). */
export function selectionMetric(recipe: PreprocessingRecipe, goal: Goal): MetricName {
  if (goal.metric !== 'validationLoss') return goal.metric;
  return recipe.task === 'regression' ? 'rmse' : 'logLoss';
}

/** Scores outputs on the validation split by the goal as the study does (binary classes at 0.5; a binary cost at its least-cost threshold). */
export function goalScorer(recipe: PreprocessingRecipe, split: SplitArrays, goal: Goal, costs?: CostMatrix): (outputs: Float32Array) => number {
  const metric = selectionMetric(recipe, goal);
  if (metric === 'cost') {
    if (!costs) throw new Error('the cost goal needs the study\'s costs');
    const classes = Int32Array.from(split.y);
    return (outputs) => costMetric(classes, outputs, outputCount(recipe), costs);
  }
  return (outputs) => metricsOfOutputs(recipe, split, outputs)[metric] ?? Number.NaN;
}

/** A library network's outputs on the validation and test rows, from its weights. */
export function libraryNetwork(ranked: RankedTrial, weights: NamedWeights[], recipe: PreprocessingRecipe, validation: SplitArrays, test: SplitArrays): LibraryNetwork {
  const model: tf.LayersModel = buildLayersModel(ranked.trial.configuration, recipe, weights);
  try {
    return {
      ranked,
      weights,
      validation: predictRows(model, validation.x, validation.rows, recipe.inputCount),
      test: predictRows(model, test.x, test.rows, recipe.inputCount),
    };
  } finally {
    model.dispose();
  }
}

/** The chosen ensemble and its averaged outputs on the validation and test rows. */
export interface ChosenEnsemble {
  choice: EnsembleChoice;
  rounds: number;
  validation: Float32Array;
  test: Float32Array;
}

/** Greedy selection over the library (best rank first), scored by the goal on the validation split. */
export function chooseEnsemble(library: readonly LibraryNetwork[], recipe: PreprocessingRecipe, validation: SplitArrays, goal: Goal, costs?: CostMatrix): ChosenEnsemble {
  const rounds = ROUNDS_PER_LIBRARY_NETWORK * library.length;
  const better = selectionMetric(recipe, goal) === goal.metric ? goal.better : 'lower';
  const choice = selectEnsemble(library.map((network) => network.validation), goalScorer(recipe, validation, goal, costs), better, rounds);
  return {
    choice,
    rounds,
    validation: averageOutputs(library.map((network) => network.validation), choice.counts),
    test: averageOutputs(library.map((network) => network.test), choice.counts),
  };
}
