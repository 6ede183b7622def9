/**
 * Everything that crosses between the main thread and a trial worker thread.
 * A worker receives a {@link ThreadTrainRequest} (a job with the data set attached as shared
 * memory), posts {@link EpochReport}s on the request's progress port as it goes, and resolves with a
 * `TrainResult`. A thrown error marks the job failed; a non-finite loss is a `diverged` result.
 */
import type { MessagePort } from 'node:worker_threads';
import type { TrainRequest } from '../../trainers/contract.js';

/** Test-only fault injection: make this request throw, hang or end its thread. */
export type FaultKind = 'throw' | 'hang' | 'exit';

/** A {@link TrainRequest} as a worker thread receives it: its data set in shared memory, a port for its epoch reports. */
export interface ThreadTrainRequest extends TrainRequest {
  /** Where epoch reports are posted as they happen. */
  progressPort?: MessagePort;
  fault?: FaultKind;
}
