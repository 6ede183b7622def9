/** What `configuration.json` records of an ensemble export (`export --ensemble`, `export --average-folds`). */
import type { TrialConfiguration } from '../core/configuration.js';
import type { PreprocessingRecipe } from '../data/types.js';
import type { Metrics } from '../metrics/metrics.js';

/** One member of an exported ensemble. */
export interface EnsembleMemberDescription {
  /** Rank in the study's ranking when exported. */
  rank: number;
  trialId: number;
  /** Times greedy selection picked it; its weight is `count` over the sum of counts. */
  count: number;
  weight: number;
  /** Its folder in the export (`model.json`, `weights.bin`), relative to the export folder. */
  folder: string;
  configuration: TrialConfiguration;
  /** The goal's metric of this network alone on the validation split (a fold network: on its own fold's validation rows). */
  score: number;
  /** `export --average-folds`: the fold (1-based, the split record's order) this network was trained without. */
  fold?: number;
  /** `export --average-folds`: the recipe fitted on this fold network's training rows, which encodes its inputs (absent: the export's `recipe`). */
  recipe?: PreprocessingRecipe;
}

export interface EnsembleDescription {
  method: string;
  /** The library: the top ranks offered to the selection. */
  library: number[];
  /** Rounds of selection run, and the round whose (nested) ensemble was kept (absent for the fold networks, which are not selected). */
  rounds?: number;
  chosenAtRound?: number;
  /** `export --average-folds`: the study's fold count; the members are one trial's fold networks, weighed equally. */
  folds?: number;
  members: EnsembleMemberDescription[];
  /** The ensemble's metrics on the validation split: optimistic twice over (the members and their weights were chosen on these rows). For the fold networks: each training and validation row scored by the fold network that did not train on it. */
  validation: Metrics;
  /** The ensemble's metrics on the held-out test split (absent when the study holds none). */
  test?: Metrics;
  /** The single winner (rank 1; for the fold networks, the trial retrained on training and validation rows) alone on the same test split, at its own decision threshold. */
  winnerTest?: Metrics;
}
