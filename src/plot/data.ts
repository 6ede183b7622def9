import type { CurvePoint, TrialStatus } from '../core/trial.js';
import type { StudyDocument } from '../store/types.js';
import type { MetricName } from '../core/configuration.js';
import { scoreAt } from '../core/ranking.js';

/** The goal metric's value at one epoch, or undefined when it was not recorded or is not finite. */
export function metricAt(point: CurvePoint, metric: MetricName): number | undefined {
  return scoreAt(point, { metric }) ?? undefined;
}

export interface CurveRow {
  trialId: number;
  epoch: number;
  value: number;
  rung: number;
  status: TrialStatus;
  /** True on the trial's last recorded epoch, where the chart marks where it stopped. */
  last: boolean;
}

/** Every trial's goal metric at every epoch it trained. */
export function curveRows(study: StudyDocument): CurveRow[] {
  return study.trials.flatMap((trial) => {
    const rows = trial.curve.flatMap((point) => {
      const value = metricAt(point, study.goal.metric);
      return value === undefined ? [] : [{ trialId: trial.id, epoch: point.epoch, value, rung: trial.rung, status: trial.status, last: false }];
    });
    const last = rows.reduce<CurveRow | undefined>((latest, row) => (latest === undefined || row.epoch > latest.epoch ? row : latest), undefined);
    if (last) last.last = true;
    return rows;
  });
}

/**
 * An axis range that a run-away value does not flatten: the quartiles widened by 3 interquartile
 * ranges on each side (Tukey's far-out fences), kept within the values' own range. Undefined when no
 * value lies outside, so the axis is left to fit the data. Values beyond it are drawn at its edge.
 * Source: Tukey, "Exploratory Data Analysis", 1977 (fences at 3 IQR for "far out" values).
 */
export function robustDomain(values: readonly number[]): [number, number] | undefined {
  if (values.length < 4) return undefined;
  const sorted = [...values].sort((a, b) => a - b);
  const quantile = (q: number): number => {
    const position = (sorted.length - 1) * q;
    const low = Math.floor(position);
    return sorted[low]! + (sorted[Math.min(low + 1, sorted.length - 1)]! - sorted[low]!) * (position - low);
  };
  const q1 = quantile(0.25);
  const q3 = quantile(0.75);
  const spread = q3 - q1;
  const lo = Math.max(sorted[0]!, q1 - 3 * spread);
  const hi = Math.min(sorted.at(-1)!, q3 + 3 * spread);
  if (spread === 0 || (lo === sorted[0] && hi === sorted.at(-1))) return undefined;
  return [lo, hi];
}

/** The smallest and largest of `values`, by a loop (spreading a long array into Math.min overflows the stack). */
export function extent(values: Iterable<number>): [number, number] {
  let low = Infinity;
  let high = -Infinity;
  for (const value of values) {
    if (value < low) low = value;
    if (value > high) high = value;
  }
  return [low, high];
}

/** The trials' scores at one epoch, summarised: how many reached it, the median and the middle 80%. */
export interface EpochSummary {
  epoch: number;
  /** Trials with a score at this epoch. */
  count: number;
  low: number;
  median: number;
  high: number;
}

/** The value at quantile `q` of sorted values, linearly interpolated (Hyndman and Fan's type 7). */
export function sortedQuantile(sorted: readonly number[], q: number): number {
  const position = (sorted.length - 1) * q;
  const low = Math.floor(position);
  return sorted[low]! + (sorted[Math.min(low + 1, sorted.length - 1)]! - sorted[low]!) * (position - low);
}

/**
 * Per epoch, the 10th, 50th and 90th percentile of the curve values recorded there and how many
 * trials reached it, in epoch order: the learning curves of many trials in a few numbers per epoch.
 * Source: Hyndman and Fan, "Sample quantiles in statistical packages", 1996 (definition 7).
 */
export function epochSummaries(rows: readonly { epoch: number; value: number }[]): EpochSummary[] {
  const byEpoch = new Map<number, number[]>();
  for (const row of rows) {
    const values = byEpoch.get(row.epoch);
    if (values) values.push(row.value);
    else byEpoch.set(row.epoch, [row.value]);
  }
  return [...byEpoch]
    .sort((a, b) => a[0] - b[0])
    .map(([epoch, values]) => {
      const sorted = values.sort((a, b) => a - b);
      return { epoch, count: sorted.length, low: sortedQuantile(sorted, 0.1), median: sortedQuantile(sorted, 0.5), high: sortedQuantile(sorted, 0.9) };
    });
}
