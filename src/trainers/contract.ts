/**
 * The trainer seam: what trains one job, whatever thread or process it runs in. A trainer is given a
 * {@link TrainRequest} (a job with its data set in memory), calls `onEpoch` as each epoch ends, and
 * settles with a {@link TrainResult}; a thrown error is a failed job, a non-finite loss a `diverged`
 * result. Both trainers (the WebAssembly engine and the tfjs reference) pass one contract suite,
 * `test/trainers.contract.test.ts`.
 */
import type { EpochReport, SharedDataset, TrainJob, TrainResult } from '../core/job.js';

/** Which trainer trains a request: the WebAssembly engine (default) or the tfjs reference path. */
export type TrainerName = 'engine' | 'tfjs';

/** A job with the data set it names, already in this thread's memory. */
export interface TrainRequest extends TrainJob {
  /** The job's data set (shared memory in a worker thread); its id is `datasetId`. */
  dataset: SharedDataset;
  /** @default 'engine' */
  trainer?: TrainerName;
}

/** One way of training a job. */
export interface Trainer {
  readonly name: TrainerName;
  /**
   * Trains epochs `fromEpoch + 1 .. toEpoch`, continuing from `checkpoint` when `fromEpoch > 0`.
   * One request at a time per thread (a worker thread runs one job at once).
   */
  train(request: TrainRequest, onEpoch?: (report: EpochReport) => void): Promise<TrainResult>;
}
