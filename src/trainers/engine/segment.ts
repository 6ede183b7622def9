/**
 * A training request run on the engine: the same contract, reports and checkpoints as the tfjs
 * path's `trainSegment` (src/trainers/tfjs/loop.ts), which stays the reference it is tested against.
 */
import type { EpochReport, TrainResult } from '../../core/job.js';
import type { TrainRequest } from '../contract.js';
import { completeJob, lastEpochOf, runEpochs } from '../shared/epochs.js';
import { networkWeights, restoreTrialCheckpoint, trialCheckpoint } from './checkpoint-state.js';
import { EngineTrial } from './trial.js';

/**
 * Trains epochs `fromEpoch + 1 .. toEpoch` of one trial on the engine, continuing from
 * `checkpoint` when `fromEpoch > 0`; a completed segment returns the checkpoint at `toEpoch`.
 * A non-finite training or validation loss ends the segment as `diverged` with no checkpoint and no report for that epoch. Validation metrics are computed in JavaScript over the
 * engine's outputs. The engine creates no tfjs tensors, so the result has no tensor counts.
 */
export async function trainSegmentOnEngine(request: TrainRequest, onEpoch?: (report: EpochReport) => void): Promise<TrainResult> {
  const started = performance.now();
  const { dataset, configuration } = request;
  const trial = EngineTrial.create({ trialId: request.trialId, seed: request.seed, configuration, dataset });
  if (request.fromEpoch > 0) {
    if (!request.checkpoint) throw new Error(`trial ${request.trialId}: fromEpoch is ${request.fromEpoch} but no checkpoint was given`);
    restoreTrialCheckpoint(request.checkpoint, trial, request.fromEpoch);
  }
  const steps = {
    trainEpoch: (epoch: number) => trial.trainEpoch(epoch),
    validate: () => trial.evaluate(),
    setLearningRate: (rate: number) => trial.setLearningRate(rate),
    snapshot: () => networkWeights(trial),
  };
  const { epochs, divergence, stopping } = runEpochs(request, steps, onEpoch);
  const result: TrainResult = { trialId: request.trialId, status: divergence ? 'diverged' : 'completed', epochs, workerSeconds: (performance.now() - started) / 1000 };
  if (divergence) result.divergence = divergence;
  else Object.assign(result, completeJob(request, stopping, trialCheckpoint(trial, lastEpochOf(request, stopping)), () => trial.evaluate().outputs));
  result.workerSeconds = (performance.now() - started) / 1000;
  return result;
}
