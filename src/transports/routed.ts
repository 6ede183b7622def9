import type { TrialTransport } from './transport.js';
import type { EpochReport, SharedDataset, TrainJob, TrainResult } from '../core/job.js';

/**
 * Two transports as one: a job goes to the first while it has room (local threads), else to the
 * second (a queue). Capacity is the sum. Results do not depend on where a job ran.
 */
export class RoutedTransport implements TrialTransport {
  private firstRunning = 0;

  constructor(
    private readonly first: TrialTransport,
    private readonly second: TrialTransport,
  ) {}

  get capacity(): number {
    return this.first.capacity + this.second.capacity;
  }

  async addDataset(dataset: SharedDataset): Promise<void> {
    await Promise.all([this.first.addDataset(dataset), this.second.addDataset(dataset)]);
  }

  async run(job: TrainJob, onEpoch: (report: EpochReport) => void, signal: AbortSignal): Promise<TrainResult> {
    if (this.firstRunning >= this.first.capacity) return this.second.run(job, onEpoch, signal);
    this.firstRunning++;
    try {
      return await this.first.run(job, onEpoch, signal);
    } finally {
      this.firstRunning--;
    }
  }

  async close(): Promise<void> {
    await Promise.all([this.first.close(), this.second.close()]);
  }
}
