/**
 * Everything that crosses between the main thread and a trial worker thread.
 * A worker receives a {@link TrainRequest} (a {@link TrainJob} with the data set attached as shared
 * memory), posts {@link EpochReport}s on the request's progress port as it goes, and resolves with a
 * {@link TrainResult}. A thrown error marks the job failed; a non-finite loss is a `diverged` result.
 */
import type { MessagePort } from 'node:worker_threads';
import type { EpochReport, SharedDataset, TrainJob, TrainResult } from '../../core/job.js';

export type { EpochReport, SharedDataset, TrainJob, TrainResult };

/**
 * What trains a request: the fused WebAssembly engine (src/trainers/engine/, the default) or the tfjs
 * reference path (src/trainers/tfjs/loop.ts).
 */
export type TrainerName = 'engine' | 'tfjs';

/** Test-only fault injection: make this request throw, hang or end its thread. */
export type FaultKind = 'throw' | 'hang' | 'exit';

export interface TrainRequest extends TrainJob {
  /** The job's data set, backed by SharedArrayBuffer (never copied per job); its id is `datasetId`. */
  dataset: SharedDataset;
  /** Where epoch reports are posted as they happen. */
  progressPort?: MessagePort;
  /** Default 'engine'. */
  trainer?: TrainerName;
  fault?: FaultKind;
}
