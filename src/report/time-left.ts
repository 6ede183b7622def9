/**
 * The time a study has left, from this study's own measurements: the training seconds its epochs took,
 * per unit of an epoch's cost (the network's work per row, `core/size.ts`'s `rowWork`: its dense
 * multiply-adds and its normalisations, so a wide, deep or residual network counts for more and a
 * funnel for less), and the epochs still planned. Start-up (reading the data, starting threads) is not
 * in the measurement, so a short study's first estimate is not inflated by it. No estimate until a job has ended.
 */
import type { TrialConfiguration } from '../core/configuration.js';
import { rowWork, type NetworkShape } from '../core/size.js';
import type { Job } from '../samplers/sampler.js';

/** The shape priced when the study did not say (a network's hidden layers dominate its work). */
const UNKNOWN_SHAPE: NetworkShape = { inputs: 1, outputs: 1 };

/** Relative cost of one epoch of a configuration for the data's shape: its work per row (every configuration trains on the same rows). */
export function epochCost(configuration: Pick<TrialConfiguration, 'depth' | 'width' | 'shape' | 'block'>, shape: NetworkShape = UNKNOWN_SHAPE): number {
  return Math.max(1, rowWork(configuration, shape.inputs, shape.outputs));
}

export class TimeLeftEstimator {
  /** Worker-seconds and cost units of the epochs measured in this session. */
  private seconds = 0;
  private cost = 0;
  private epochs = 0;
  private firstStart: number | undefined;
  private ended = false;
  /** Running jobs by trial, with the epochs they have trained so far. */
  private readonly running = new Map<number, { job: Job; trained: number }>();

  /** `shape`: the study's data shape (its own data set's inputs and outputs). */
  constructor(
    private readonly threads: number,
    private readonly shape: NetworkShape = UNKNOWN_SHAPE,
  ) {}

  started(job: Job, now: number): void {
    this.firstStart ??= now;
    this.running.set(job.trialId, { job, trained: job.fromEpoch });
  }

  epoch(trialId: number, workerSeconds: number): void {
    const entry = this.running.get(trialId);
    if (!entry) return;
    entry.trained += 1;
    this.seconds += workerSeconds;
    this.cost += epochCost(entry.job.configuration, this.shape);
    this.epochs += 1;
  }

  jobEnded(job: Job): void {
    const entry = this.running.get(job.trialId);
    if (entry && entry.job.rung === job.rung && entry.job.toEpoch === job.toEpoch) this.running.delete(job.trialId);
    this.ended = true;
  }

  /**
   * Seconds left for `epochsLeft` planned epochs, or undefined without a basis (no job ended, nothing
   * measured). Running jobs count at their own cost; the rest at the mean cost of the epochs so far.
   * Divided by the threads the study keeps busy (measured, at most the threads it has).
   */
  secondsLeft(epochsLeft: number, now: number): number | undefined {
    if (!this.ended || this.seconds <= 0 || this.cost <= 0 || this.firstStart === undefined || epochsLeft <= 0) return undefined;
    const perCost = this.seconds / this.cost;
    let runningEpochs = 0;
    let runningCost = 0;
    for (const { job, trained } of this.running.values()) {
      const left = Math.max(0, job.toEpoch - trained);
      runningEpochs += left;
      runningCost += left * epochCost(job.configuration, this.shape);
    }
    const rest = Math.max(0, epochsLeft - runningEpochs) * (this.cost / this.epochs);
    const elapsed = (now - this.firstStart) / 1000;
    const busy = elapsed > 0 ? Math.min(this.threads, Math.max(1, this.seconds / elapsed)) : this.threads;
    return ((runningCost + rest) * perCost) / busy;
  }
}
