/** Seeded synthetic classification data for the benchmarks (no file I/O). */
import type { SharedDataset } from '../src/core/job.js';
import { stream, type Rng } from '../src/random/streams.js';

const gaussian = (rng: Rng): number => Math.sqrt(-2 * Math.log(1 - rng())) * Math.cos(2 * Math.PI * rng());

/**
 * `trainRows + validationRows` rows of standard-normal inputs; the class is the argmax of
 * `classes` fixed random linear scores. Same arguments, same numbers, in any thread.
 */
export function benchDataset(trainRows: number, validationRows: number, inputs = 20, classes = 3, seed = 1): SharedDataset {
  const rng = stream('bench', 'data', seed);
  const weights = Array.from({ length: classes * inputs }, () => gaussian(rng));
  const rows = trainRows + validationRows;
  const x = new Float32Array(rows * inputs);
  const y = new Float32Array(rows);
  for (let r = 0; r < rows; r++) {
    for (let i = 0; i < inputs; i++) x[r * inputs + i] = gaussian(rng);
    let best = 0;
    let bestScore = -Infinity;
    for (let c = 0; c < classes; c++) {
      let s = 0;
      for (let i = 0; i < inputs; i++) s += weights[c * inputs + i]! * x[r * inputs + i]!;
      if (s > bestScore) [best, bestScore] = [c, s];
    }
    y[r] = best;
  }
  return {
    id: `bench-${trainRows}-${validationRows}-${inputs}-${classes}-${seed}`,
    task: 'multiclass',
    inputCount: inputs,
    outputCount: classes,
    train: { rows: trainRows, x: x.slice(0, trainRows * inputs), y: y.slice(0, trainRows) },
    validation: { rows: validationRows, x: x.slice(trainRows * inputs), y: y.slice(trainRows) },
  };
}

/** Trainable parameters of a dense network inputs -> depth x width -> outputs. */
export function parameterCount(inputs: number, depth: number, width: number, outputs: number): number {
  let count = 0;
  let fanIn = inputs;
  for (let i = 0; i < depth; i++) {
    count += fanIn * width + width;
    fanIn = width;
  }
  return count + fanIn * outputs + outputs;
}

function shared(values: Float32Array): Float32Array {
  const copy = new Float32Array(new SharedArrayBuffer(values.byteLength));
  copy.set(values);
  return copy;
}

/** The same data set backed by SharedArrayBuffers, as the run loop hands it to workers (no copy per trial). */
export function sharedDataset(dataset: SharedDataset): SharedDataset {
  return {
    ...dataset,
    train: { rows: dataset.train.rows, x: shared(dataset.train.x), y: shared(dataset.train.y) },
    validation: { rows: dataset.validation.rows, x: shared(dataset.validation.x), y: shared(dataset.validation.y) },
  };
}
