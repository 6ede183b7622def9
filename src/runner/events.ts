import type { Job } from '../samplers/sampler.js';
import type { RankedTrial } from '../core/ranking.js';
import type { StudyDocument } from '../store/types.js';
import type { TrialRecord } from '../core/trial.js';
import type { EpochReport, TrainJob } from '../core/job.js';
import type { RepeatRun } from '../core/repeats.js';
import type { NetworkShape } from '../core/size.js';

/** How far a study has come, counted the same way for every sampler. */
export interface StudyProgress {
  /** Jobs settled (a trial under a halving sampler has one job per rung it reaches). */
  jobsDone: number;
  /** Epochs trained by the trials' recorded jobs. */
  epochsDone: number;
  /** Trials that ended (trained, dropped, diverged, failed, timed out). */
  endedTrials: number;
  /** What the sampler plans at most: configurations and epochs. */
  plannedTrials: number;
  plannedEpochs: number;
}

/** What a running study tells its observer (the CLI's progress display, a test, a library user). */
export type StudyEvent =
  | { type: 'study-started'; name: string; dir: string; threads: number; plannedTrials: number; plannedEpochs: number; resumed: boolean; progress: StudyProgress; shape?: NetworkShape }
  | { type: 'job-started'; job: Job; fromCheckpoint: boolean }
  | { type: 'epoch'; report: EpochReport }
  /**
   * A job settled and is on disk. `best` is the leader of the study's one ranking (`rankTrials`) at that moment.
   * `finishedTrials` counts ended trials (as `progress.endedTrials`).
   */
  | { type: 'trial-finished'; trial: TrialRecord; job: Job; best: TrialRecord | undefined; finishedTrials: number; progress: StudyProgress }
  /** Something the user should know that is not an error, e.g. a lost checkpoint that is retrained. Said once per cause. */
  | { type: 'note'; message: string }
  /** A repeat run after the search started (src/runner/repeats.ts). */
  | { type: 'repeat-started'; job: TrainJob }
  /** A repeat run settled and is on disk; `progress` counts it. */
  | { type: 'repeat-finished'; run: RepeatRun; progress: StudyProgress }
  | { type: 'stopping'; reason: string }
  | { type: 'study-finished'; doc: StudyDocument; ranking: RankedTrial[] };

export type StudyObserver = (event: StudyEvent) => void;
