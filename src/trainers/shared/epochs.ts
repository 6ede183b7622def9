/**
 * The epoch loop both trainers share: set the epoch's learning rate (schedules), train an epoch,
 * score the validation split, report, stop as diverged at the first loss that stops being finite or
 * runs away, and with early stopping keep the best epoch's weights and stop where the rule says.
 */
import type { EpochReport, TrainResult } from '../../core/job.js';
import type { TrainRequest } from '../contract.js';
import { checkpointManifest, decodeCheckpoint, withBestEpoch, withNetwork, type NamedWeights } from '../../checkpoints/format.js';
import { observeEpoch, type EarlyStoppingState } from '../../core/early-stopping.js';
import { scoreAt } from '../../core/ranking.js';
import { jobClassFigures } from '../../metrics/class-figures.js';
import type { ClassFigures } from '../../core/class-figures.js';
import { divergenceReason } from './divergence.js';
import { computeMetrics } from '../../metrics/metrics.js';
import { costMetric } from '../../metrics/costs.js';
import { hasSchedule, learningRateAt } from '../../core/schedule.js';

/** What a trainer does for one epoch: the mean training loss, then the validation loss and outputs. */
export interface EpochSteps {
  trainEpoch(epoch: number): number;
  /** Sets the learning rate of the next epoch's steps (called only for a configuration with a schedule). */
  setLearningRate(learningRate: number): void;
  validate(): { loss: number; outputs: Float32Array };
  /** A copy of the network weights now, in checkpoint order (taken at each new best epoch when early stopping is on). */
  snapshot(): NamedWeights[];
}

/** What early stopping brings out of a job's epochs. */
export interface StoppingRun {
  /** The rule's state after the last epoch (undefined while no epoch had a finite score). */
  state: EarlyStoppingState | undefined;
  /** The epoch after which the rule stopped the trial, when it did. */
  stoppedAtEpoch?: number;
  /** Set when this job found a new best epoch: that epoch's weights and validation outputs. */
  best?: { weights: NamedWeights[]; outputs: Float32Array };
  /** Set when the loss diverged after a best epoch: the stop is then at the epoch before it. */
  divergence?: { epoch: number; reason: string };
}

/**
 * Runs epochs `fromEpoch + 1 .. toEpoch`, sending each report to `onEpoch` as it ends.
 * A loss that stops being finite or runs away (`divergenceReason`) ends the loop with `divergence` set;
 * that epoch has no report.
 */
export function runEpochs(
  request: TrainRequest,
  steps: EpochSteps,
  onEpoch?: (report: EpochReport) => void,
): { epochs: EpochReport[]; divergence?: TrainResult['divergence']; stopping?: StoppingRun } {
  const { dataset } = request;
  const epochs: EpochReport[] = [];
  const settings = request.earlyStopping;
  const stopping: StoppingRun | undefined = settings ? { state: incomingState(request) } : undefined;
  const scheduled = hasSchedule(request.configuration);
  if (scheduled && request.configuration.schedule === 'cosine' && request.maxEpochs === undefined) {
    throw new Error(`trial ${request.trialId}: a cosine schedule needs the study's maxEpochs in the job`);
  }
  for (let epoch = request.fromEpoch + 1; epoch <= request.toEpoch; epoch++) {
    const epochStarted = performance.now();
    if (scheduled) steps.setLearningRate(learningRateAt(request.configuration, epoch, request.maxEpochs ?? request.toEpoch));
    const trainLoss = steps.trainEpoch(epoch);
    const validation = Number.isFinite(trainLoss) ? steps.validate() : { loss: Number.NaN, outputs: new Float32Array(0) };
    const reason = divergenceReason(epoch, trainLoss, validation.loss, dataset.task, dataset.outputCount);
    if (reason) {
      // With early stopping and a best epoch, a divergence is a stop after the last finite epoch:
      // the trial is scored and exported at its best epoch, whose weights are kept.
      if (stopping?.state) {
        stopping.stoppedAtEpoch = epoch - 1;
        stopping.divergence = { epoch, reason };
        return { epochs, stopping };
      }
      return { epochs, divergence: { epoch, reason }, ...(stopping ? { stopping } : {}) };
    }
    const report: EpochReport = {
      trialId: request.trialId,
      epoch,
      trainLoss,
      validationLoss: validation.loss,
      metrics: validationMetrics(request, validation.outputs),
      seconds: (performance.now() - epochStarted) / 1000,
    };
    epochs.push(report);
    onEpoch?.(report);
    if (settings && stopping) {
      const seen = observeEpoch(settings, stopping.state, epoch, scoreAt(report, settings.goal));
      stopping.state = seen.state;
      if (seen.improved) stopping.best = { weights: steps.snapshot(), outputs: validation.outputs };
      // A stop at the job's last epoch counts too: the trial is not promoted past it (as straight through it would stop here).
      if (seen.stop) {
        stopping.stoppedAtEpoch = epoch;
        break;
      }
    }
  }
  return { epochs, ...(stopping ? { stopping } : {}) };
}

/** The epoch's validation metrics, with the `cost` metric when the data set carries costs. */
function validationMetrics(request: TrainRequest, outputs: Float32Array): EpochReport['metrics'] {
  const { dataset } = request;
  const metrics = computeMetrics(dataset.task, dataset.validation.y, outputs, dataset.outputCount, dataset.targetScaling);
  if (dataset.costMatrix) metrics.cost = costMetric(Int32Array.from(dataset.validation.y), outputs, dataset.outputCount, dataset.costMatrix);
  return metrics;
}

/** The rule's state the trial's checkpoint carries (none for a fresh start or a checkpoint written without early stopping). */
function incomingState(request: TrainRequest): EarlyStoppingState | undefined {
  if (request.fromEpoch === 0 || !request.checkpoint) return undefined;
  const best = checkpointManifest(request.checkpoint).best;
  return best ? { bestEpoch: best.epoch, bestScore: best.score } : undefined;
}

/** The epoch a job's checkpoint stands at: where the rule stopped it, else `toEpoch`. */
export function lastEpochOf(request: TrainRequest, stopping: StoppingRun | undefined): number {
  return stopping?.stoppedAtEpoch ?? request.toEpoch;
}

/**
 * A completed job's checkpoint and per-class figures, with early stopping folded in: the checkpoint
 * gains the best epoch (score and, when it is not the last epoch, its weights: this job's snapshot,
 * or the incoming checkpoint's), and the figures are the best epoch's (this job's outputs, or those
 * the incoming checkpoint recorded). Without early stopping: the checkpoint as given and the figures
 * of `finalOutputs()`, the last epoch's weights.
 */
export function completeJob(
  request: TrainRequest,
  stopping: StoppingRun | undefined,
  checkpoint: Uint8Array,
  finalOutputs: () => Float32Array,
): Pick<TrainResult, 'checkpoint' | 'classFigures' | 'bestEpoch' | 'stoppedAtEpoch' | 'divergedAfterBest'> {
  const { dataset } = request;
  const lastEpoch = lastEpochOf(request, stopping);
  const state = stopping?.state;
  if (!stopping || !state) {
    const figures = jobClassFigures(dataset, finalOutputs(), lastEpoch);
    return { checkpoint, ...(figures ? { classFigures: figures } : {}), ...(stopping?.stoppedAtEpoch !== undefined ? { stoppedAtEpoch: stopping.stoppedAtEpoch } : {}) };
  }
  let weights: NamedWeights[] | undefined;
  let figures: ClassFigures | undefined;
  if (stopping.best) {
    weights = stopping.best.weights;
    figures = jobClassFigures(dataset, stopping.best.outputs, state.bestEpoch);
  } else {
    // The best epoch is an earlier job's: its weights and figures come from the incoming checkpoint.
    const incoming = decodeCheckpoint(request.checkpoint!);
    weights = incoming.best ?? incoming.network;
    figures = incoming.manifest.best?.classFigures;
  }
  // After a divergence the last weights are not numbers: the checkpoint's own network is the best epoch's
  // (the trial is never continued; only its best epoch is used).
  const own = stopping.divergence ? withNetwork(checkpoint, weights) : checkpoint;
  const result: Pick<TrainResult, 'checkpoint' | 'classFigures' | 'bestEpoch' | 'stoppedAtEpoch' | 'divergedAfterBest'> = {
    checkpoint: withBestEpoch(own, { epoch: state.bestEpoch, score: state.bestScore, weights, ...(figures ? { classFigures: figures } : {}) }),
    bestEpoch: state.bestEpoch,
  };
  if (stopping.divergence) result.divergedAfterBest = stopping.divergence;
  if (figures) result.classFigures = figures;
  if (stopping.stoppedAtEpoch !== undefined) result.stoppedAtEpoch = stopping.stoppedAtEpoch;
  return result;
}
