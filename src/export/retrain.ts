/**
 * `export --retrain`: trains a chosen configuration afresh on the training and validation rows
 * together, in the calling thread, for the epochs the study gave it, on the training engine (as trials train).
 */
import type { PreparedData, SplitArrays } from '../data/types.js';
import { toSharedDataset } from '../data/prepare.js';
import { UserError } from '../core/errors.js';
import type { SharedDataset } from '../core/job.js';
import type { TrialRecord } from '../core/trial.js';
import { initBackend } from '../trainers/tfjs/backend.js';
import { hasSchedule } from '../core/schedule.js';
import { checkpointWeights, type NamedWeights } from '../checkpoints/format.js';
import { releaseDatasets } from '../trainers/tfjs/data-cache.js';
import { runTrainRequest } from '../trainers/run-request.js';

function concatenate(a: SplitArrays, b: SplitArrays): { rows: number; x: Float32Array; y: Float32Array } {
  const x = new Float32Array(a.x.length + b.x.length);
  x.set(a.x);
  x.set(b.x, a.x.length);
  const y = new Float32Array(a.y.length + b.y.length);
  y.set(a.y);
  y.set(b.y, a.y.length);
  return { rows: a.rows + b.rows, x, y };
}

/**
 * The training loop wants a validation split to report on each epoch; it gets the validation rows,
 * which are now also training rows, so its per-epoch figures are discarded. The test split is not
 * passed: it is scored once, by the caller, after training.
 */
function retrainDataset(data: PreparedData, trialId: number): SharedDataset {
  const base = toSharedDataset(data, `export-retrain-${trialId}`);
  return { ...base, train: concatenate(data.train, data.validation) };
}

/**
 * Trains `trial`'s configuration from its seed on training plus validation rows for
 * `trial.epochsTrained` epochs (its best epoch's count with early stopping) and returns its network weights.
 * @throws UserError (E_EXPORT_DIVERGED) when the loss stops being finite.
 */
export async function retrainTrial(data: PreparedData, trial: TrialRecord, maxEpochs?: number): Promise<NamedWeights[]> {
  await initBackend();
  const dataset = retrainDataset(data, trial.id);
  try {
    const result = await runTrainRequest({
      trialId: trial.id,
      seed: trial.seed,
      configuration: trial.configuration,
      dataset,
      datasetId: dataset.id,
      fromEpoch: 0,
      // With early stopping: as many epochs as the best epoch had (there is no validation split left to stop on).
      toEpoch: trial.bestEpoch ?? trial.epochsTrained,
      ...(maxEpochs !== undefined && hasSchedule(trial.configuration) ? { maxEpochs } : {}),
    });
    if (result.status === 'diverged') {
      throw new UserError(
        'E_EXPORT_DIVERGED',
        `trial ${trial.id}: retraining on training and validation rows diverged (${result.divergence?.reason ?? 'non-finite loss'}); export it without --retrain or pick another rank`,
      );
    }
    if (!result.checkpoint) throw new Error(`trial ${trial.id}: retraining returned no checkpoint`);
    return checkpointWeights(result.checkpoint);
  } finally {
    releaseDatasets();
  }
}
