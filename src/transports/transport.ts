import type { EpochReport, SharedDataset, TrainJob, TrainResult } from '../core/job.js';

/**
 * Where trials run. The run loop hands a transport at most {@link TrialTransport.capacity} jobs at
 * once; the transport trains each and settles it. The default is {@link ThreadTransport} (worker
 * threads on this machine); others run jobs elsewhere or evaluate a closed-form function instead of
 * training (tests and benchmarks). Every implementation runs the contract suite in
 * `test/transport.contract.test.ts`.
 */
export interface TrialTransport {
  /** Jobs that may run at once (read before each dispatch; a transport may let it change). */
  readonly capacity: number;
  /** Make a data set available before any job names its id. Called once per data set. */
  addDataset(dataset: SharedDataset): Promise<void>;
  /**
   * Train one job. Resolves with its result; rejects when training throws or the worker dies, or
   * when `signal` aborts (the transport then stops the job as best it can and rejects promptly).
   */
  run(job: TrainJob, onEpoch: (report: EpochReport) => void, signal: AbortSignal): Promise<TrainResult>;
  /** Stop every worker and release resources; jobs still running reject. */
  close(): Promise<void>;
}
