/**
 * k-fold cross-validation as a transport wrapper (seam 2): one job of a trial becomes k fold jobs,
 * one per fold's data set (training = the other folds, validation = this fold, each with its own
 * recipe), run on whatever transport it wraps (threads, Redis), and one result comes back whose
 * per-epoch figures are the mean over the folds, with their standard errors. The run loop, the
 * samplers and the study file see one job and one result, so halving samplers cut on the fold mean.
 *
 * Standard error of the mean over k folds: s / sqrt(k), with s the sample standard deviation
 * (denominator k - 1). Source: Freedman, Pisani, Purves, "Statistics", 4th ed., 2007, "The Accuracy
 * of Averages" (SE of an average = SD / sqrt(n)) and the t-test chapter's SD+ (the SD with n - 1).
 */
import { decodeFoldBundle, encodeFoldBundle } from '../checkpoints/fold-bundle.js';
import type { MetricName } from '../core/configuration.js';
import type { ClassFigures } from '../core/class-figures.js';
import type { TrialTransport } from './transport.js';
import type { EpochReport, SharedDataset, TrainJob, TrainResult } from '../core/job.js';

/** Mean and standard error (s / sqrt(k), s with k - 1) of k values; the standard error is 0 for one value. */
export function meanAndStandardError(values: readonly number[]): { mean: number; standardError: number } {
  const k = values.length;
  const mean = values.reduce((sum, value) => sum + value, 0) / k;
  if (k < 2) return { mean, standardError: 0 };
  const squares = values.reduce((sum, value) => sum + (value - mean) ** 2, 0);
  return { mean, standardError: Math.sqrt(squares / (k - 1)) / Math.sqrt(k) };
}

/** One epoch over the folds (reports in fold order): the mean of every figure, the standard error of each metric and of the validation loss. */
export function meanReport(reports: readonly EpochReport[]): EpochReport {
  const first = reports[0]!;
  const mean = (pick: (report: EpochReport) => number): number => meanAndStandardError(reports.map(pick)).mean;
  const metrics: Partial<Record<MetricName, number>> = {};
  const standardErrors: Partial<Record<MetricName, number>> = {};
  for (const name of Object.keys(first.metrics) as MetricName[]) {
    if (!reports.every((report) => report.metrics[name] !== undefined)) continue;
    const figures = meanAndStandardError(reports.map((report) => report.metrics[name]!));
    metrics[name] = figures.mean;
    standardErrors[name] = figures.standardError;
  }
  const loss = meanAndStandardError(reports.map((report) => report.validationLoss));
  standardErrors.validationLoss = loss.standardError;
  return {
    trialId: first.trialId,
    epoch: first.epoch,
    trainLoss: mean((report) => report.trainLoss),
    validationLoss: loss.mean,
    metrics,
    standardErrors,
    // Worker time of the epoch over all folds: what the epoch cost.
    seconds: reports.reduce((sum, report) => sum + report.seconds, 0),
  };
}

/** Per-class figures over the folds: the confusion matrices summed (every training and validation row counted once, by the network that did not train on it), average precision averaged. */
export function combinedClassFigures(figures: readonly ClassFigures[]): ClassFigures {
  const first = figures[0]!;
  const confusion = first.confusion.map((row, t) => row.map((_, p) => figures.reduce((sum, f) => sum + f.confusion[t]![p]!, 0)));
  const averagePrecision = first.averagePrecision.map((_, c) => {
    const known = figures.map((f) => f.averagePrecision[c]).filter((value): value is number => value !== null && value !== undefined);
    return known.length === 0 ? null : known.reduce((sum, value) => sum + value, 0) / known.length;
  });
  const combined: ClassFigures = { epoch: first.epoch, confusion, averagePrecision };
  if (first.threshold !== undefined) combined.threshold = first.threshold;
  return combined;
}

function checkFoldCount(folds: readonly SharedDataset[]): void {
  if (folds.length < 2) throw new RangeError(`folds transport: needs at least 2 fold data sets, got ${folds.length}`);
}

/** Wraps a transport so that every job runs once per fold. */
export class FoldsTransport implements TrialTransport {
  private busy = 0;
  private readonly waiting: (() => void)[] = [];

  /** The fold data sets of each study data set added, by its id. */
  private readonly foldSets = new Map<string, readonly SharedDataset[]>();
  private readonly foldsOf: (dataset: SharedDataset) => readonly SharedDataset[];
  private readonly fixed: readonly SharedDataset[] | undefined;

  /**
   * `folds`: the k fold data sets, in fold order (the one the split record lists); or, for a study
   * that trains on several data sets (one per preprocessing choice), the k fold data sets of each.
   */
  constructor(
    private readonly inner: TrialTransport,
    folds: readonly SharedDataset[] | ((dataset: SharedDataset) => readonly SharedDataset[]),
  ) {
    if (typeof folds === 'function') {
      this.foldsOf = folds;
    } else {
      checkFoldCount(folds);
      this.fixed = folds;
      this.foldsOf = () => folds;
    }
  }

  /** As many trials at once as the inner transport has slots; their fold jobs share those slots, first come first served. */
  get capacity(): number {
    return this.inner.capacity;
  }

  /** The study's own data set is not trained on: its fold data sets go to the inner transport instead. */
  async addDataset(dataset: SharedDataset): Promise<void> {
    const folds = this.foldsOf(dataset);
    checkFoldCount(folds);
    this.foldSets.set(dataset.id, folds);
    for (const fold of folds) await this.inner.addDataset(fold);
  }

  async run(job: TrainJob, onEpoch: (report: EpochReport) => void, signal: AbortSignal): Promise<TrainResult> {
    if (signal.aborted) throw new Error(`trial ${job.trialId}: stopped`);
    const folds = this.foldSets.get(job.datasetId) ?? this.fixed;
    if (!folds) throw new Error(`folds transport: no data set with id ${job.datasetId} was added`);
    const k = folds.length;
    const parts = job.checkpoint ? decodeFoldBundle(job.checkpoint, k) : undefined;
    const byEpoch = folds.map(() => new Map<number, EpochReport>());
    let announced = job.fromEpoch;
    const reported = (fold: number) => (report: EpochReport): void => {
      byEpoch[fold]!.set(report.epoch, report);
      // An epoch is reported once every fold has finished it, as the mean in fold order.
      while (byEpoch.every((reports) => reports.has(announced + 1))) {
        announced++;
        onEpoch(meanReport(byEpoch.map((reports) => reports.get(announced)!)));
      }
    };
    // One fold failing stops the others: the run loop retries or ends the whole trial.
    const stop = new AbortController();
    // The first fold to fail names the failure; the others then fail because they were stopped.
    let firstFailure: { error: unknown } | undefined;
    const onAbort = (): void => stop.abort();
    signal.addEventListener('abort', onAbort, { once: true });
    try {
      const settled = await Promise.allSettled(
        folds.map((fold, i) =>
          this.inSlot(stop.signal, () => {
            const foldJob: TrainJob = { ...job, datasetId: fold.id };
            if (parts) foldJob.checkpoint = parts[i]!;
            else delete foldJob.checkpoint;
            // The folds' networks have one shape: the first fold's thread times it.
            if (i > 0) delete foldJob.timeRows;
            return this.inner.run(foldJob, reported(i), stop.signal);
          }).catch((error: unknown) => {
            firstFailure ??= { error };
            stop.abort();
            throw error;
          }),
        ),
      );
      if (firstFailure) throw firstFailure.error;
      return combineResults(job, settled.map((outcome) => (outcome as PromiseFulfilledResult<TrainResult>).value));
    } finally {
      signal.removeEventListener('abort', onAbort);
    }
  }

  async close(): Promise<void> {
    await this.inner.close();
  }

  /** Runs `work` once one of the inner transport's slots is free. */
  private async inSlot<T>(signal: AbortSignal, work: () => Promise<T>): Promise<T> {
    while (this.busy >= Math.max(1, this.inner.capacity)) {
      signal.throwIfAborted();
      await new Promise<void>((resolve) => {
        const wake = (): void => {
          signal.removeEventListener('abort', wake);
          const at = this.waiting.indexOf(wake);
          if (at >= 0) this.waiting.splice(at, 1);
          resolve();
        };
        this.waiting.push(wake);
        signal.addEventListener('abort', wake, { once: true });
      });
    }
    signal.throwIfAborted();
    this.busy++;
    try {
      return await work();
    } finally {
      this.busy--;
      this.waiting[0]?.();
    }
  }
}

/** The k fold results of one job as one result. */
function combineResults(job: TrainJob, results: readonly TrainResult[]): TrainResult {
  const diverged = results.map((result, fold) => ({ result, fold })).filter(({ result }) => result.status === 'diverged');
  const lastEpoch = Math.min(...results.map((result) => result.epochs.at(-1)?.epoch ?? job.fromEpoch));
  const epochs: EpochReport[] = [];
  for (let epoch = job.fromEpoch + 1; epoch <= lastEpoch; epoch++) {
    const reports = results.map((result) => result.epochs.find((report) => report.epoch === epoch));
    if (reports.some((report) => report === undefined)) break;
    epochs.push(meanReport(reports as EpochReport[]));
  }
  const places = [...new Set(results.map((result) => result.ranOn).filter((place): place is string => place !== undefined))];
  const combined: TrainResult = {
    trialId: job.trialId,
    status: diverged.length > 0 ? 'diverged' : 'completed',
    epochs,
    workerSeconds: results.reduce((sum, result) => sum + result.workerSeconds, 0),
  };
  if (places.length > 0) combined.ranOn = places.join(', ');
  if (results[0]?.rowMicroseconds !== undefined) combined.rowMicroseconds = results[0].rowMicroseconds;
  if (results.every((result) => result.tensorsBefore !== undefined && result.tensorsAfter !== undefined)) {
    combined.tensorsBefore = results.reduce((sum, result) => sum + result.tensorsBefore!, 0);
    combined.tensorsAfter = results.reduce((sum, result) => sum + result.tensorsAfter!, 0);
  }
  if (diverged.length > 0) {
    const earliest = diverged.reduce((a, b) => ((b.result.divergence?.epoch ?? Infinity) < (a.result.divergence?.epoch ?? Infinity) ? b : a));
    combined.divergence = { epoch: earliest.result.divergence?.epoch ?? lastEpoch + 1, reason: `fold ${earliest.fold + 1}: ${earliest.result.divergence?.reason ?? 'non-finite loss'}` };
    return combined;
  }
  if (results.every((result) => result.checkpoint !== undefined)) combined.checkpoint = encodeFoldBundle(results.map((result) => result.checkpoint!));
  if (results.every((result) => result.classFigures !== undefined)) combined.classFigures = combinedClassFigures(results.map((result) => result.classFigures!));
  return combined;
}
