/**
 * What crosses any transport, whatever runs the trial (a worker thread here, a process on another
 * machine): a {@link TrainJob} goes out, {@link EpochReport}s stream back as epochs end, and one
 * {@link TrainResult} settles it. A failure rejects the run; a non-finite loss is not a failure but a
 * `diverged` result. These are domain types: no message port, no shared buffer, no file path.
 */
import type { MetricName, Task, TrialConfiguration } from './configuration.js';
import type { EarlyStoppingSettings } from './early-stopping.js';
import type { ClassFigures } from './class-figures.js';

/** Training and validation matrices of a study, named by an id so a worker can fetch or cache them once. */
export interface SharedDataset {
  /** Identifies the data set (a content hash): equal ids mean equal data. */
  id: string;
  task: Task;
  inputCount: number;
  /** 1 for binary and regression, the number of classes for multiclass. */
  outputCount: number;
  train: { rows: number; x: Float32Array; y: Float32Array };
  validation: { rows: number; x: Float32Array; y: Float32Array };
  /** Regression only: to report RMSE, MAE and R² in the target's own units. */
  targetScaling?: { mean: number; std: number };
  /**
   * Classification only: the training loss's weight of each class (index = label: 0/1 for binary,
   * the class index for multiclass), normalised so the training rows' mean weight is 1
   * (src/data/class-weights.ts). Absent: every row weighs the same.
   */
  classWeights?: number[];
  /**
   * Classification only: the cost of each confusion-matrix cell, `[actual][predicted]` by class
   * index (`data.costs`); present, every epoch also reports the `cost` metric. Absent: no costs.
   */
  costMatrix?: number[][];
}

/** Train one trial's configuration from one epoch count to another. */
export interface TrainJob {
  trialId: number;
  /** Fixes the initial weights, dropout masks and each epoch's shuffle (together with the epoch number). */
  seed: number;
  configuration: TrialConfiguration;
  /** The {@link SharedDataset.id} to train on; the transport provides the data. */
  datasetId: string;
  /** Epochs already trained (0 for a fresh start); training runs epochs fromEpoch+1 .. toEpoch. */
  fromEpoch: number;
  toEpoch: number;
  /** The trial's checkpoint at `fromEpoch`, as bytes (required when fromEpoch > 0). */
  checkpoint?: Uint8Array;
  /** The study's `budget.maxEpochs`: the length of a cosine schedule (required when the configuration's schedule is cosine). */
  maxEpochs?: number;
  /** Early stopping (src/core/early-stopping.ts): the rule and the goal it judges; absent: off. */
  earlyStopping?: EarlyStoppingSettings;
  /** A repeat run of the trial's configuration with a further seed (1 .. seeds, src/core/repeats.ts); absent: the trial's own job. */
  repeat?: number;
  /**
   * True: after the job's last epoch, the thread that trained it times the network's prediction per row
   * (`trainers/engine/row-timing.ts`) and returns it as {@link TrainResult.rowMicroseconds}. The run
   * loop asks until the trial has a time recorded; absent: not timed.
   */
  timeRows?: boolean;
}

/** One epoch's figures. Metrics are on the validation split. */
export interface EpochReport {
  trialId: number;
  /** 1-based epoch number over the whole life of the trial. */
  epoch: number;
  trainLoss: number;
  validationLoss: number;
  metrics: Partial<Record<MetricName, number>>;
  /** k-fold studies: the standard error of each metric's fold mean (and of the validation loss), s / sqrt(k). */
  standardErrors?: Partial<Record<MetricName, number>>;
  /** Wall time of the epoch in the worker, seconds. */
  seconds: number;
}

export interface TrainResult {
  trialId: number;
  status: 'completed' | 'diverged';
  /** Reports of the epochs trained in this job only. */
  epochs: EpochReport[];
  /** Set when status is 'diverged'; `epoch` is the 1-based epoch whose loss became non-finite. */
  divergence?: { epoch: number; reason: string };
  /**
   * The trial's checkpoint at its last epoch trained (`toEpoch`, or `stoppedAtEpoch`): network and
   * optimizer state, and with early stopping the best epoch's weights and score; when it completed.
   */
  checkpoint?: Uint8Array;
  /** With early stopping: the best epoch of the trial so far (over all its jobs); absent when no epoch had a finite score. */
  bestEpoch?: number;
  /** With early stopping: the epoch after which the rule stopped the trial in this job (absent: it trained to `toEpoch`). */
  stoppedAtEpoch?: number;
  /** With early stopping: the loss diverged after a best epoch, so the trial stopped after the epoch before (`stoppedAtEpoch`) instead of diverging. */
  divergedAfterBest?: { epoch: number; reason: string };
  /** Classification, when it completed: confusion matrix and average precision per class on the validation split, for the checkpointed weights (the best epoch's, with early stopping). */
  classFigures?: ClassFigures;
  /** Worker wall time of the whole job, seconds. */
  workerSeconds: number;
  /** Where the job ran, e.g. `thread 2` or `host-a/4711`, for the study file and the progress display. */
  ranOn?: string;
  /** When the job asked for it (`timeRows`) and completed: microseconds per row of the network's prediction, measured where it trained (not part of `workerSeconds`). */
  rowMicroseconds?: number;
  /** `tf.memory().numTensors` before and after the job, where the worker reports it: equal unless tensors leaked. */
  tensorsBefore?: number;
  tensorsAfter?: number;
}
