import { CHECKPOINT_FORMAT_VERSION, checkpointManifest, encodeCheckpoint } from '../checkpoints/format.js';
import type { MetricName, TrialConfiguration } from '../core/configuration.js';
import type { TrialTransport } from './transport.js';
import type { EpochReport, SharedDataset, TrainJob, TrainResult } from '../core/job.js';

/** The figures of one epoch of a closed-form "training": a validation loss and any metrics. */
export interface ClosedFormEpoch {
  validationLoss: number;
  metrics?: Partial<Record<MetricName, number>>;
}

export interface ClosedFormTransportOptions {
  /** The figures of `configuration` after `epoch` epochs (1-based). A non-finite loss is reported as divergence. */
  evaluate(configuration: TrialConfiguration, epoch: number, trialId: number): ClosedFormEpoch;
  /** Jobs that may run at once. @default 1 */
  capacity?: number;
  /** Wall time each epoch takes, so that jobs overlap as they do in training. @default 0 */
  millisecondsPerEpoch?: number;
  /** The time per row a job that asks for it (`timeRows`) returns, from its configuration (deterministic, unlike a measurement). @default none returned */
  rowMicroseconds?: (configuration: TrialConfiguration) => number;
}

/**
 * A transport that evaluates a function instead of training, for checking samplers and the run loop
 * on thousands of trials in seconds (tests and benchmarks only). Jobs settle on a later turn of the
 * event loop, in the order they were started; its checkpoints carry a manifest and no weights, and a
 * continuation checks that its checkpoint stands at the job's first epoch, as training does.
 */
export class ClosedFormTransport implements TrialTransport {
  readonly capacity: number;

  constructor(private readonly options: ClosedFormTransportOptions) {
    this.capacity = options.capacity ?? 1;
  }

  async addDataset(_dataset: SharedDataset): Promise<void> {}

  async run(job: TrainJob, onEpoch: (report: EpochReport) => void, signal: AbortSignal): Promise<TrainResult> {
    const wait = (this.options.millisecondsPerEpoch ?? 0) * (job.toEpoch - job.fromEpoch);
    await new Promise<void>((resolve) => (wait > 0 ? setTimeout(resolve, wait) : setImmediate(resolve)));
    if (signal.aborted) throw new Error(`trial ${job.trialId}: stopped`);
    if (job.fromEpoch > 0) {
      if (!job.checkpoint) throw new Error(`trial ${job.trialId}: fromEpoch is ${job.fromEpoch} but no checkpoint was given`);
      const manifest = checkpointManifest(job.checkpoint);
      if (manifest.trialId !== job.trialId || manifest.epoch !== job.fromEpoch) {
        throw new Error(`trial ${job.trialId}: checkpoint holds trial ${manifest.trialId} at epoch ${manifest.epoch}, expected epoch ${job.fromEpoch}`);
      }
    }
    const epochs: EpochReport[] = [];
    for (let epoch = job.fromEpoch + 1; epoch <= job.toEpoch; epoch++) {
      const figures = this.options.evaluate(job.configuration, epoch, job.trialId);
      if (!Number.isFinite(figures.validationLoss)) {
        return { trialId: job.trialId, status: 'diverged', epochs, divergence: { epoch, reason: `validation loss became ${figures.validationLoss} at epoch ${epoch}` }, workerSeconds: 0, ranOn: 'closed form' };
      }
      const report: EpochReport = { trialId: job.trialId, epoch, trainLoss: figures.validationLoss, validationLoss: figures.validationLoss, metrics: figures.metrics ?? {}, seconds: 0 };
      epochs.push(report);
      onEpoch(report);
    }
    const checkpoint = encodeCheckpoint(
      {
        formatVersion: CHECKPOINT_FORMAT_VERSION,
        trialId: job.trialId,
        epoch: job.toEpoch,
        params: job.configuration,
        variables: [],
        optimizer: { name: job.configuration.optimizer, iterations: 0, variables: [] },
      },
      [],
    );
    const timed = job.timeRows === true && this.options.rowMicroseconds ? { rowMicroseconds: this.options.rowMicroseconds(job.configuration) } : {};
    return { trialId: job.trialId, status: 'completed', epochs, checkpoint, workerSeconds: 0, ranOn: 'closed form', ...timed };
  }

  async close(): Promise<void> {}
}
