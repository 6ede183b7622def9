/**
 * The epoch loop both trainers share: train an epoch, score the validation split, report, and stop
 * as diverged at the first loss that stops being finite or runs away.
 */
import type { EpochReport, TrainRequest, TrainResult } from '../pool/messages.js';
import { divergenceReason } from './divergence.js';
import { computeMetrics } from './metrics.js';
import { hasSchedule, learningRateAt } from './schedule.js';

/** What a trainer does for one epoch: the mean training loss, then the validation loss and outputs. */
export interface EpochSteps {
  trainEpoch(epoch: number): number;
  /** Sets the learning rate of the next epoch's steps (called only for a configuration with a schedule). */
  setLearningRate(learningRate: number): void;
  validate(): { loss: number; outputs: Float32Array };
}

/**
 * Runs epochs `fromEpoch + 1 .. toEpoch`, sending each report to `onEpoch` and `request.progressPort`.
 * A loss that stops being finite or runs away (`divergenceReason`) ends the loop with `divergence` set;
 * that epoch has no report.
 */
export function runEpochs(request: TrainRequest, steps: EpochSteps, onEpoch?: (report: EpochReport) => void): { epochs: EpochReport[]; divergence?: TrainResult['divergence'] } {
  const { dataset } = request;
  const epochs: EpochReport[] = [];
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
    if (reason) return { epochs, divergence: { epoch, reason } };
    const report: EpochReport = {
      trialId: request.trialId,
      epoch,
      trainLoss,
      validationLoss: validation.loss,
      metrics: computeMetrics(dataset.task, dataset.validation.y, validation.outputs, dataset.outputCount, dataset.targetScaling),
      seconds: (performance.now() - epochStarted) / 1000,
    };
    epochs.push(report);
    onEpoch?.(report);
    request.progressPort?.postMessage(report);
  }
  return { epochs };
}
