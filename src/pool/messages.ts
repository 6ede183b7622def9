/**
 * Everything that crosses between the main thread and a trial worker.
 * A worker receives a {@link TrainRequest}, posts {@link EpochReport}s on the request's
 * progress port as it goes, and resolves with a {@link TrainResult}. A thrown error marks
 * the trial failed; a non-finite loss is not an error but a `diverged` result.
 */
import type { MessagePort } from 'node:worker_threads';
import type { MetricName, Task, TrialParams } from '../study/definition.js';

/** Training and validation matrices shared with workers (backed by SharedArrayBuffer, never copied per trial). */
export interface SharedDataset {
  /** Identifies the data set so a worker can keep its tensors between trials. */
  id: string;
  task: Task;
  inputCount: number;
  /** 1 for binary and regression, the number of classes for multiclass. */
  outputCount: number;
  train: { rows: number; x: Float32Array; y: Float32Array };
  validation: { rows: number; x: Float32Array; y: Float32Array };
  /** Regression only: to report RMSE, MAE and R² in the target's own units. */
  targetScaling?: { mean: number; std: number };
}

/** Test-only fault injection: make this request throw, hang or end its thread. */
export type FaultKind = 'throw' | 'hang' | 'exit';

export interface TrainRequest {
  trialId: number;
  /** Fixes the initial weights, dropout masks and each epoch's shuffle (together with the epoch number). */
  seed: number;
  params: TrialParams;
  dataset: SharedDataset;
  /** Epochs already trained (0 for a fresh start); training runs epochs fromEpoch+1 .. toEpoch. */
  fromEpoch: number;
  toEpoch: number;
  /** Directory of the checkpoint to continue from (required when fromEpoch > 0). */
  checkpointIn?: string;
  /** Directory to write the checkpoint to at the end of the segment; omitted means none is kept. */
  checkpointOut?: string;
  /** Where epoch reports are posted as they happen. */
  progressPort?: MessagePort;
  fault?: FaultKind;
}

/** One epoch's figures. Metrics are on the validation split. */
export interface EpochReport {
  trialId: number;
  /** 1-based epoch number over the whole life of the trial. */
  epoch: number;
  trainLoss: number;
  validationLoss: number;
  metrics: Partial<Record<MetricName, number>>;
  /** Wall time of the epoch in the worker, seconds. */
  seconds: number;
}

export interface TrainResult {
  trialId: number;
  status: 'completed' | 'diverged';
  /** Reports of the epochs trained in this request only. */
  epochs: EpochReport[];
  /** Set when status is 'diverged'. */
  divergence?: { epoch: number; reason: string };
  /** Worker wall time of the whole request, seconds. */
  workerSeconds: number;
  /** `tf.memory().numTensors` before and after the request: equal unless tensors leaked. */
  tensorsBefore: number;
  tensorsAfter: number;
}
