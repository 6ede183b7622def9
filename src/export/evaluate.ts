import type * as tf from '@tensorflow/tfjs';
import { unscaleTarget } from '../data/recipe.js';
import type { PreprocessingRecipe, SplitArrays } from '../data/types.js';
import { computeMetrics, regressionMetrics, type Metrics } from '../metrics/metrics.js';
import { outputCount, predictRows } from './model-files.js';

/**
 * The task's metrics of an exported model on one encoded split (a binary model's classes at
 * `threshold`). The exported regression model answers in the target's units, so the split's
 * standardised targets are unscaled to compare. `outputs`: the model's outputs on the split, when
 * already computed.
 */
export function evaluateExportedModel(model: tf.LayersModel, recipe: PreprocessingRecipe, split: SplitArrays, threshold = 0.5, outputs = predictRows(model, split.x, split.rows, recipe.inputCount)): Metrics {
  if (recipe.task === 'regression') {
    return regressionMetrics(Float64Array.from(split.y, (y) => unscaleTarget(recipe, y)), outputs);
  }
  return computeMetrics(recipe.task, split.y, outputs, outputCount(recipe), undefined, threshold);
}
