/** What `configuration.json` records of an ensemble export (`export --ensemble`). */
import type { TrialConfiguration } from '../core/configuration.js';
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
  /** The goal's metric of this network alone on the validation split. */
  score: number;
}

export interface EnsembleDescription {
  method: string;
  /** The library: the top ranks offered to the selection. */
  library: number[];
  /** Rounds of selection run, and the round whose (nested) ensemble was kept. */
  rounds: number;
  chosenAtRound: number;
  members: EnsembleMemberDescription[];
  /** The ensemble's metrics on the validation split: optimistic twice over (the members and their weights were chosen on these rows). */
  validation: Metrics;
  /** The ensemble's metrics on the held-out test split (absent when the study holds none). */
  test?: Metrics;
  /** The single winner (rank 1) alone on the same test split, at its own decision threshold. */
  winnerTest?: Metrics;
}
