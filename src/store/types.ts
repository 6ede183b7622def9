import type { DataHashes } from '../data/dataset-id.js';
import type { DataSummary, PreprocessingRecipe } from '../data/types.js';
import type { ProposalOrigin } from '../core/trial.js';
import type { Goal } from '../core/configuration.js';
import type { TrialRecord } from '../core/trial.js';
import type { StudyDefinition } from '../study/definition.js';
import type { ClassFigures } from '../core/class-figures.js';
import type { StudyBaselines } from '../core/baselines.js';
import type { RepeatsRecord } from '../core/repeats.js';

export interface StudyTotals {
  epochsTrained: number;
  /** Busy thread time divided by threads times wall time (`workerUtilisation` in files from before the rename, read as this). */
  threadUtilisation: number;
  wallSeconds: number;
  /** Threads of the session (`workers` in files from before the rename, read as this). */
  threads: number;
  /** Thread-seconds spent training jobs that brought a result, this session (absent in files from before it was kept). */
  busySeconds?: number;
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
  /** `time-limit`: stopped by its time limit (`budget.minutes`, `--minutes`); `resume` goes on, as after an interrupt. */
  state: 'running' | 'interrupted' | 'time-limit' | 'finished';
  createdAt: string;
  updatedAt: string;
  trials: TrialRecord[];
  totals?: StudyTotals;
  /** Content hashes of the CSV and of the splits when the study started (absent in files from before they were kept). */
  dataHashes?: DataHashes;
  /** What every network must beat on the same validation rows (absent in files from before baselines; a resume adds them). */
  baselines?: StudyBaselines;
  /** The repeat runs after the search (absent in files from before them, with `repeats.top` 0, and with folds). */
  repeats?: RepeatsRecord;
  /** Each time the study was continued on a CSV that differs from the recorded one, because the user said so. */
  dataChanges?: { at: string; csv: string; command: string }[];
}
