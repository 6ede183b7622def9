/** What a study records of the models every network must beat, scored on the same validation rows. */
import type { MetricName } from './configuration.js';

/** One baseline's validation figures (every metric of the task, and the validation loss). */
export interface BaselineEntry {
  metrics: Partial<Record<MetricName, number>>;
  /** How it was made, in words (e.g. "the majority class of the training rows"). */
  what: string;
}

/**
 * The study's baselines. `constant`: the majority class (with the training class shares as
 * probabilities) or the training mean. `linear`: a network without hidden layers over a small L2 grid
 * (absent in files from before it, or when every grid point diverged).
 */
export interface StudyBaselines {
  constant: BaselineEntry;
  linear?: BaselineEntry;
}

/** A baseline's value of the goal metric, or undefined when it has none. */
export function baselineScore(entry: BaselineEntry | undefined, metric: MetricName): number | undefined {
  const value = entry?.metrics[metric];
  return value !== undefined && Number.isFinite(value) ? value : undefined;
}
