import * as tf from '@tensorflow/tfjs';
import type { SharedDataset } from '../../core/job.js';

/** A data set's matrices as tensors, kept alive between trials in this thread. */
export interface DatasetTensors {
  trainX: tf.Tensor2D;
  /** rows x 1 (binary: 0/1, regression: standardised target) or rows x classes one-hot (multiclass). */
  trainY: tf.Tensor2D;
  validationX: tf.Tensor2D;
  validationY: tf.Tensor2D;
  /** rows x 1: each training row's class weight, when the data set has class weights. */
  trainWeights?: tf.Tensor2D;
}

/** At most this many data sets stay on the device; the least recently used one is released first. */
export const CACHED_DATASETS = 4;

const cache = new Map<string, DatasetTensors>();

function labels(dataset: SharedDataset, y: Float32Array, rows: number): tf.Tensor2D {
  if (dataset.task !== 'multiclass') return tf.tensor2d(y, [rows, 1]);
  return tf.tidy(() => tf.oneHot(tf.tensor1d(Int32Array.from(y), 'int32'), dataset.outputCount).toFloat() as tf.Tensor2D);
}

/**
 * The tensors of `dataset`, created on first use and kept (outside any tidy scope) under its id.
 * Tensors created here are not part of a trial's tensor balance.
 */
export function datasetTensors(dataset: SharedDataset): DatasetTensors {
  // A trial's own class weighting (trainers/shared/class-weights.ts) keeps the id: the weights are part of the key.
  const key = dataset.classWeights ? `${dataset.id}|class-weights:${dataset.classWeights.join(',')}` : dataset.id;
  const hit = cache.get(key);
  if (hit) {
    cache.delete(key);
    cache.set(key, hit); // re-insert: Map order is the recency order
    return hit;
  }
  const { train, validation, inputCount } = dataset;
  const tensors: DatasetTensors = tf.tidy(() => ({
    trainX: tf.keep(tf.tensor2d(train.x, [train.rows, inputCount])),
    trainY: tf.keep(labels(dataset, train.y, train.rows)),
    validationX: tf.keep(tf.tensor2d(validation.x, [validation.rows, inputCount])),
    validationY: tf.keep(labels(dataset, validation.y, validation.rows)),
  }));
  const { classWeights } = dataset;
  if (classWeights) tensors.trainWeights = tf.keep(tf.tensor2d(Float32Array.from(train.y, (label) => classWeights[label]!), [train.rows, 1]));
  cache.set(key, tensors);
  while (cache.size > CACHED_DATASETS) {
    const [oldest, old] = cache.entries().next().value as [string, DatasetTensors];
    tf.dispose(Object.values(old) as tf.Tensor[]);
    cache.delete(oldest);
  }
  return tensors;
}

/** Releases every cached data set (for tests and for a thread about to end). */
export function releaseDatasets(): void {
  for (const tensors of cache.values()) tf.dispose(Object.values(tensors) as tf.Tensor[]);
  cache.clear();
}
