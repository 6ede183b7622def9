/**
 * `export --retrain`: trains a chosen configuration afresh on the training and validation rows
 * together, in the calling thread, for the epochs the study gave it, on the training engine (as trials train).
 */
import type { PreparedData, SplitArrays } from '../data/types.js';
import { toSharedDataset } from '../data/prepare.js';
import { datasetId } from '../data/dataset-id.js';
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
  // Named by content too: the engine keeps the last data set by id, and one process may retrain trials of several studies.
  const base = toSharedDataset(data, `export-retrain-${trialId}-${datasetId(data)}`);
  return { ...base, train: concatenate(data.train, data.validation) };
}

/** How many epochs a retrained network trains, and from what. */
export interface RetrainEpochs {
  /** The epochs the study scored the trial at (its best epoch with early stopping). */
  studyEpochs: number;
  /** Training rows per epoch in the study (with folds, the folds' mean). */
  studyRows: number;
  /** Training rows per epoch when retrained (training plus validation rows). */
  rows: number;
  /** The retrained network's epochs: the study's optimizer steps over the larger set, rounded, at least 1. */
  epochs: number;
  /** Optimizer steps in the study and when retrained (whole epochs make them differ). */
  studySteps: number;
  steps: number;
  rule: string;
}

/**
 * The retrained steps may differ from the study's by this share before the export warns (whole
 * epochs cannot match them at one or two epochs). Common practice (no source).
 */
export const RETRAIN_STEP_TOLERANCE = 0.25;

/** The rule in words, for the export's output. */
export const RETRAIN_EPOCH_RULE =
  'the same number of optimizer steps as the study took (epochs x ceil(rows / batch size)), so more rows take fewer epochs: Goodfellow, Bengio, Courville, Deep Learning, 2016, section 7.8, Algorithm 7.2';

/**
 * The retrained network's epoch count: the study's epochs (best epoch with early stopping) scaled so
 * the optimizer takes as many steps over training plus validation rows as it took in the study.
 * Source: Goodfellow et al., Deep Learning, 2016, 7.8, Algorithm 7.2 (retrain on all data for the
 * same number of steps; from memory, which also notes that the same number of passes is the other choice).
 */
export function retrainEpochs(data: PreparedData, trial: TrialRecord): RetrainEpochs {
  const studyEpochs = trial.bestEpoch ?? trial.epochsTrained;
  const studyRows = data.folds && data.folds.length > 0 ? data.folds.reduce((sum, fold) => sum + fold.train.rows, 0) / data.folds.length : data.train.rows;
  const rows = data.train.rows + data.validation.rows;
  const batch = trial.configuration.batchSize;
  const studySteps = studyEpochs * Math.ceil(studyRows / batch);
  const epochs = Math.max(1, Math.round(studySteps / Math.ceil(rows / batch)));
  return { studyEpochs, studyRows, rows, epochs, studySteps, steps: epochs * Math.ceil(rows / batch), rule: RETRAIN_EPOCH_RULE };
}

/**
 * Trains `trial`'s configuration from its seed on training plus validation rows for
 * {@link retrainEpochs} epochs and returns its network weights.
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
      // The study's steps (to its best epoch with early stopping: no validation split is left to stop on).
      toEpoch: retrainEpochs(data, trial).epochs,
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
