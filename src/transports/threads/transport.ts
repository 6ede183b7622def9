import { TrialPool } from './pool.js';
import type { FaultKind } from './messages.js';

export type { FaultKind };
import type { TrialTransport } from '../transport.js';
import type { EpochReport, SharedDataset, TrainJob, TrainResult } from '../../core/job.js';

/** Test-only: which fault to inject into a job's `attempt`-th run (1-based). */
export type FaultInjector = (trialId: number, attempt: number) => FaultKind | undefined;

export interface ThreadTransportOptions {
  /** Worker threads, each training one job at a time. */
  threads: number;
  /** Thread entry point (tests and benchmarks use fixture entry points). @default the compiled `dist/threads/trial-thread.js` */
  threadFile?: string;
  /** Test-only fault injection, passed to the worker with the job. @default none */
  faults?: FaultInjector;
}

/**
 * The default transport: a piscina pool of worker threads on this machine. Data sets are shared
 * memory (SharedArrayBuffer), handed to every thread without a copy; each thread keeps its tensors.
 */
export class ThreadTransport implements TrialTransport {
  readonly capacity: number;
  private readonly pool: TrialPool;
  private readonly datasets = new Map<string, SharedDataset>();
  /** Runs of each job so far, keyed by trial and end epoch, for the fault injector's attempt count. */
  private readonly runs = new Map<string, number>();

  constructor(private readonly options: ThreadTransportOptions) {
    if (!Number.isInteger(options.threads) || options.threads < 1) {
      throw new RangeError(`options.threads must be a positive integer, got ${options.threads}`);
    }
    this.capacity = options.threads;
    this.pool = new TrialPool({ threads: options.threads, ...(options.threadFile ? { threadFile: options.threadFile } : {}) });
  }

  async addDataset(dataset: SharedDataset): Promise<void> {
    this.datasets.set(dataset.id, dataset);
  }

  async run(job: TrainJob, onEpoch: (report: EpochReport) => void, signal: AbortSignal): Promise<TrainResult> {
    const dataset = this.datasets.get(job.datasetId);
    if (!dataset) throw new Error(`thread transport: no data set with id ${job.datasetId} was added`);
    const key = `${job.trialId}/${job.toEpoch}`;
    const attempt = (this.runs.get(key) ?? 0) + 1;
    this.runs.set(key, attempt);
    const fault = this.options.faults?.(job.trialId, attempt);
    return this.pool.run({ ...job, dataset, ...(fault ? { fault } : {}) }, onEpoch, signal);
  }

  async close(): Promise<void> {
    await this.pool.close();
  }
}
