import type { DataHashes } from '../data/dataset-id.js';
import type { DataSummary, PreprocessingRecipe } from '../data/types.js';
import type { ProposalOrigin } from '../samplers/sampler.js';
import type { EpochReport } from '../core/job.js';
import type { Goal, StudyDefinition, TrialConfiguration } from '../study/definition.js';
import type { ClassFigures } from '../metrics/class-figures.js';

/**
 * Life of a trial. `training`: a job trains it. `waiting`: finished a rung, waiting for the sampler's
 * promotion decision (its checkpoint is kept). `trained`: trained to the most epochs the sampler gives
 * it. `dropped`: finished its rung but was not promoted (halving samplers).
 */
export type TrialStatus = 'training' | 'waiting' | 'trained' | 'dropped' | 'diverged' | 'failed' | 'timed-out';

/** One epoch of a trial's curve, as stored (the trial id is implied). */
export type CurvePoint = Omit<EpochReport, 'trialId'>;

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
  /** Why the sampler promoted the trial out of each rung (asynchronous halving records this). */
  promotions?: { fromRung: number; reason: string }[];
}

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

export interface StudyTotals {
  epochsTrained: number;
  /** Busy worker time divided by workers times wall time. */
  workerUtilisation: number;
  wallSeconds: number;
  workers: number;
}

/** The whole study file. */
export interface StudyDocument {
  format: 'rungwise-study';
  /** 3 since the vocabulary of format 3 (`goal`, `score`, `configuration`, the status words); versions 1 and 2 are migrated when opened. */
  version: 3;
  name: string;
  /** The definition as validated, with defaults applied. */
  definition: StudyDefinition;
  /** Absolute path of the definition file the study was launched from. */
  definitionFile: string;
  goal: Goal;
  data: DataSummary;
  recipe: PreprocessingRecipe;
  state: 'running' | 'interrupted' | 'finished';
  createdAt: string;
  updatedAt: string;
  trials: TrialRecord[];
  totals?: StudyTotals;
  /** Content hashes of the CSV and of the splits when the study started (absent in files from before they were kept). */
  dataHashes?: DataHashes;
  /** Each time the study was continued on a CSV that differs from the recorded one, because the user said so. */
  dataChanges?: { at: string; csv: string; command: string }[];
}
