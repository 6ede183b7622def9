/**
 * Repeat runs: after the search, the best configurations train again with further seeds on the same
 * split, so the winner's score comes with its noise. The settings (a study-definition key) and what
 * the study file records of each run.
 */
import { z } from 'zod';

/** Default: the top 5 configurations, 3 more seeds each. Common practice (no source): a few seeds give a first standard error. */
export const DEFAULT_REPEATS = { top: 5, seeds: 3 } as const;

export const repeatsSchema = z
  .strictObject({
    top: z.int().min(0).max(20).default(DEFAULT_REPEATS.top).describe('How many of the best configurations train again (0: none).'),
    seeds: z.int().min(1).max(20).default(DEFAULT_REPEATS.seeds).describe('Further seeds each of them trains with, on the same split.'),
  })
  .default(DEFAULT_REPEATS)
  .describe(
    'After the search, the best configurations train again with further seeds (their scored epochs each, counted in the plan) to give each a mean and standard error, show which cannot be told from the winner, and pick the smallest within one standard error of the best. With data.folds the fold scores are used instead (no extra training). Default: top 5, 3 seeds.',
  );

export type RepeatSettings = z.output<typeof repeatsSchema>;

/** One repeat run of a configuration, as the study file records it. */
export interface RepeatRun {
  trialId: number;
  /** 1 .. seeds: the further seed's number (0 is the search's own run). */
  index: number;
  seed: number;
  /** Epochs trained from scratch: the trial's scored epoch count. */
  epochs: number;
  status: 'completed' | 'diverged' | 'failed';
  /** The goal's metric at the last epoch (null when it diverged or failed). */
  score: number | null;
  workerSeconds: number;
  error?: string;
}

/** The study file's record of the repeat runs (absent in files from before them, or with `top: 0`). */
export interface RepeatsRecord {
  /** The trials repeated, best first, chosen once when the search ended. */
  trialIds: number[];
  seeds: number;
  runs: RepeatRun[];
}

/** Jobs the repeat runs recorded so far add to the study's progress, and their epochs. */
export function repeatProgress(record: RepeatsRecord | undefined): { jobs: number; epochs: number } {
  const runs = record?.runs ?? [];
  return { jobs: runs.length, epochs: runs.reduce((sum, run) => sum + (run.status === 'completed' ? run.epochs : 0), 0) };
}
