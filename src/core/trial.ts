/** A trial as the study records it: its configuration, its status, its curve and its jobs. */
import type { ClassFigures } from './class-figures.js';
import type { TrialConfiguration } from './configuration.js';
import type { EpochReport } from './job.js';

/**
 * Life of a trial. `training`: a job trains it. `waiting`: finished a rung, waiting for the sampler's
 * promotion decision (its checkpoint is kept). `trained`: trained to the most epochs the sampler gives
 * it. `dropped`: finished its rung but was not promoted (halving samplers).
 */
export type TrialStatus = 'training' | 'waiting' | 'trained' | 'dropped' | 'diverged' | 'failed' | 'timed-out';


/** One epoch of a trial's curve, as stored (the trial id is implied). */
export type CurvePoint = Omit<EpochReport, 'trialId'>;


/** Which model or design proposed a configuration, recorded per trial (e.g. to show when a search began to exploit). */
export interface ProposalOrigin {
  /** E.g. `random`, `sobol`, `tpe`. */
  method: string;
  /** Batch of proposals the configuration belongs to, for samplers that propose in batches. */
  batch?: number;
  /** Epochs of the results the model was fitted on (model-based samplers inside Hyperband). */
  fittedOnEpochs?: number;
}


export interface TrialRecord {
  id: number;
  configuration: TrialConfiguration;
  seed: number;
  status: TrialStatus;
  /** Highest rung reached (0 for random search). */
  rung: number;
  bracket: number;
  epochsTrained: number;
  curve: CurvePoint[];
  /** The goal's metric at the last epoch trained, or with early stopping at the best epoch (null until an epoch completes, or when diverged). */
  score: number | null;
  /** k-fold studies: the standard error of the score's fold mean (s / sqrt(k), s with k - 1), at the same epoch as `score`. */
  scoreStandardError?: number;
  /** With early stopping: the epoch whose score is `score` and whose weights are exported. */
  bestEpoch?: number;
  /** With early stopping: true when the rule stopped the trial before the epochs its rung gave it. */
  stoppedEarly?: boolean;
  /** The epoch after which the rule stopped it (= `epochsTrained`). */
  stoppedAtEpoch?: number;
  /** With early stopping: the stop came from a divergence after the best epoch (the epoch and why), not from the rule. */
  divergedAfterBest?: { epoch: number; reason: string };
  /** Score at the end of each rung reached, by rung index. */
  rungScores: (number | null)[];
  startedAt?: string;
  endedAt?: string;
  /** Sum of worker wall time over all of the trial's jobs, seconds. */
  workerSeconds: number;
  divergence?: { epoch: number; reason: string };
  error?: string;
  /** Runs of a job repeated after a failure, over all of the trial's jobs (0 when nothing failed). */
  retries: number;
  /** Every job of the trial, in the order they started. */
  jobs: JobRecord[];
  /** Which design or model proposed the configuration, for samplers that propose themselves. */
  origin?: ProposalOrigin;
  /** Classification: confusion matrix and average precision per class on the validation split at the last epoch trained (absent for older files and after a divergence). */
  classFigures?: ClassFigures;
  /** Health flags at the trial's scored point (absent: healthy, or a file from before flags). A flagged trial never ranks above a healthy one. */
  flags?: TrialFlag[];
  /** Rungs whose result the sampler was told as bad (a null loss) because the trial was flagged there; replayed on resume. */
  flaggedRungs?: number[];
  /** Trainable weights and biases of its network (`core/size.ts`), from its configuration and the data's shape (absent in files from before it). */
  weightCount?: number;
  /**
   * Measured microseconds per row of its network's forward pass (the median of several timed passes over
   * a fixed batch, by the thread or worker that trained the trial, after its first job; `trainers/engine/row-timing.ts`).
   * Machine-dependent and noisy, so never part of the deterministic results; absent until measured.
   */
  rowMicroseconds?: number;
  /** Why the sampler promoted the trial out of each rung (asynchronous halving records this). */
  promotions?: { fromRung: number; reason: string }[];
}


/**
 * Why a trial's network is not to be trusted, whatever its score (`core/health.ts` decides):
 * `flat-output`: its validation predictions are one class for every row (or an AUC of exactly 0.5);
 * `blew-up`: its training diverged (with early stopping, possibly after a best epoch it is scored at);
 * `no-lift`: its score does not beat the constant predictor's (the majority class, or the training mean);
 * `too-slow`: its measured time per row is over the study's `footprint.maxRowMicroseconds` (not a health
 * problem but a limit; it ranks after every trial within the limit, and is never told to the sampler).
 */
export type TrialFlag = 'flat-output' | 'blew-up' | 'no-lift' | 'too-slow';

/** One job of a trial: a stretch of epochs, as the study file records it. */
export interface JobRecord {
  rung: number;
  fromEpoch: number;
  toEpoch: number;
  /** True when the job continued from the trial's checkpoint; false when it trained from epoch 0 (its first job, or a lost checkpoint). */
  fromCheckpoint: boolean;
  /** Runs of this job: 1, plus one for each retry after a failure. */
  attempts: number;
  status: 'training' | 'done' | 'diverged' | 'failed' | 'timed-out' | 'cut-off';
  /** Where its last run trained, as the transport names it. */
  ranOn?: string;
}

