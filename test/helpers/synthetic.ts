/** Small seeded synthetic data sets for training tests. */
import type { SharedDataset } from '../../src/core/job.js';
import type { ThreadTrainRequest as TrainRequest } from '../../src/transports/threads/messages.js';
import type { Task, TrialConfiguration } from '../../src/core/configuration.js';
import { stream, type Rng } from '../../src/random/streams.js';

export interface SyntheticOptions {
  task: Task;
  rows?: number;
  inputs?: number;
  /** Number of classes (multiclass only). */
  classes?: number;
  seed?: number;
  /** Share of rows used for validation. */
  validationFraction?: number;
}

const gaussian = (rng: Rng): number => Math.sqrt(-2 * Math.log(1 - rng())) * Math.cos(2 * Math.PI * rng());

/**
 * Standard-normal inputs and a target that depends linearly on them:
 * binary: the sign of w·x (separable); multiclass: argmax of `classes` linear scores;
 * regression: 3 + 2(w·x) + small noise, standardised with the training mean and std.
 */
export function syntheticDataset(options: SyntheticOptions): SharedDataset {
  const { task, rows = 200, inputs = 4, classes = 3, seed = 1, validationFraction = 0.25 } = options;
  const rng = stream('synthetic', task, seed);
  const scoreCount = task === 'multiclass' ? classes : 1;
  const weights = Array.from({ length: scoreCount * inputs }, () => gaussian(rng));
  const x = new Float32Array(rows * inputs);
  const y = new Float32Array(rows);
  for (let r = 0; r < rows; r++) {
    for (let i = 0; i < inputs; i++) x[r * inputs + i] = gaussian(rng);
    const scores = Array.from({ length: scoreCount }, (_, c) => {
      let s = 0;
      for (let i = 0; i < inputs; i++) s += weights[c * inputs + i]! * x[r * inputs + i]!;
      return s;
    });
    if (task === 'binary') y[r] = scores[0]! > 0 ? 1 : 0;
    else if (task === 'multiclass') y[r] = scores.indexOf(Math.max(...scores));
    else y[r] = 3 + 2 * scores[0]! + 0.1 * gaussian(rng);
  }
  const trainRows = rows - Math.round(rows * validationFraction);
  let targetScaling: SharedDataset['targetScaling'];
  if (task === 'regression') {
    const train = y.subarray(0, trainRows);
    const mean = train.reduce((a, b) => a + b, 0) / trainRows;
    const std = Math.sqrt(train.reduce((a, b) => a + (b - mean) ** 2, 0) / trainRows);
    for (let r = 0; r < rows; r++) y[r] = (y[r]! - mean) / std;
    targetScaling = { mean, std };
  }
  const dataset: SharedDataset = {
    id: `synthetic-${task}-${rows}-${inputs}-${classes}-${seed}`,
    task,
    inputCount: inputs,
    outputCount: task === 'multiclass' ? classes : 1,
    train: { rows: trainRows, x: x.slice(0, trainRows * inputs), y: y.slice(0, trainRows) },
    validation: { rows: rows - trainRows, x: x.slice(trainRows * inputs), y: y.slice(trainRows) },
  };
  if (targetScaling) dataset.targetScaling = targetScaling;
  return dataset;
}

export const baseParams: TrialConfiguration = {
  depth: 2,
  width: 8,
  activation: 'relu',
  learningRate: 0.01,
  batchSize: 32,
  optimizer: 'adam',
  l2: 0,
  dropout: 0,
};

/** A fresh-start request training epochs 1..toEpoch. */
export function trainRequest(dataset: SharedDataset, overrides: Omit<Partial<TrainRequest>, 'configuration'> & { params?: Partial<TrialConfiguration> } = {}): TrainRequest {
  const { params, ...rest } = overrides;
  return { trialId: 1, seed: 42, dataset, datasetId: dataset.id, fromEpoch: 0, toEpoch: 3, ...rest, configuration: { ...baseParams, ...params } };
}
