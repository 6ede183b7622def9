import type { CurvePoint, StudyDocument, TrialRecord, TrialStatus } from '../store/types.js';
import type { MetricName, Objective } from '../study/definition.js';
import { beats, objectiveAt } from '../study/objective.js';
import type { ParameterAxis } from './labels.js';

/** One finished trial on the progress chart. */
export interface ProgressRow {
  trialId: number;
  /** 1-based position in completion order. */
  order: number;
  status: TrialStatus;
  objective: number;
  /** Best objective among this trial and those that finished before it, in the study's direction. */
  bestSoFar: number;
}

/** A finished trial (one with `endedAt`), in completion order: by end time, then by id. */
export function completionOrder(trials: readonly TrialRecord[]): TrialRecord[] {
  return trials
    .filter((t) => t.endedAt !== undefined)
    .sort((a, b) => {
      const byTime = Date.parse(a.endedAt!) - Date.parse(b.endedAt!);
      return byTime !== 0 && Number.isFinite(byTime) ? byTime : a.id - b.id;
    });
}

function isScore(value: number | null | undefined): value is number {
  return typeof value === 'number' && Number.isFinite(value);
}

/**
 * Finished trials that have a score, numbered in completion order, with the running best.
 * Trials without a score (diverged, failed) keep their place in the numbering but get no row.
 */
export function progressRows(study: StudyDocument): ProgressRow[] {
  const rows: ProgressRow[] = [];
  let best: number | undefined;
  completionOrder(study.trials).forEach((trial, index) => {
    if (!isScore(trial.objective)) return;
    if (best === undefined || beats(trial.objective, best, study.objective.direction)) best = trial.objective;
    rows.push({ trialId: trial.id, order: index + 1, status: trial.status, objective: trial.objective, bestSoFar: best });
  });
  return rows;
}

/** The objective metric's value at one epoch, or undefined when it was not recorded or is not finite. */
export function metricAt(point: CurvePoint, metric: MetricName): number | undefined {
  return objectiveAt(point, { metric }) ?? undefined;
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

/** Every trial's objective metric at every epoch it trained. */
export function curveRows(study: StudyDocument): CurveRow[] {
  return study.trials.flatMap((trial) => {
    const rows = trial.curve.flatMap((point) => {
      const value = metricAt(point, study.objective.metric);
      return value === undefined ? [] : [{ trialId: trial.id, epoch: point.epoch, value, rung: trial.rung, status: trial.status, last: false }];
    });
    const last = rows.reduce<CurveRow | undefined>((latest, row) => (latest === undefined || row.epoch > latest.epoch ? row : latest), undefined);
    if (last) last.last = true;
    return rows;
  });
}

/** A scored trial with its hyperparameters flattened beside the objective, for the per-parameter panels. */
export type ParameterRow = Record<string, string | number> & { trialId: number; objective: number; status: TrialStatus };

export function parameterRows(study: StudyDocument): ParameterRow[] {
  return study.trials.flatMap((trial) =>
    isScore(trial.objective) ? [{ ...trial.params, trialId: trial.id, objective: trial.objective, status: trial.status }] : [],
  );
}

/** One trial's crossing of one parallel axis. */
export interface ParallelRow {
  trialId: number;
  axis: string;
  /** 0 at the axis's lowest value, 1 at its highest (categories spaced evenly by their index). */
  position: number;
  objective: number;
}

/** A value printed beside a parallel axis so positions can be read back. */
export interface ParallelLabel {
  axis: string;
  position: number;
  label: string;
}

/** Short number text for axis ends: 0.00012 → "1.2e-4", 0.25 → "0.25", 128 → "128". */
export function shortNumber(value: number): string {
  if (value !== 0 && (Math.abs(value) < 0.01 || Math.abs(value) >= 1e5)) {
    const [mantissa, exponent] = value.toExponential(1).split('e');
    return `${mantissa!.replace(/\.0$/, '')}e${Number(exponent)}`;
  }
  return String(Number(value.toPrecision(3)));
}

/**
 * Each axis is scaled to [0, 1] on its own: log axes by the logarithm, linear ones by value,
 * categories by their index in the space's order. An axis with one value sits at 0.5.
 */
export function parallelData(
  study: StudyDocument,
  axes: readonly ParameterAxis[],
  objectiveTitle: string,
): { rows: ParallelRow[]; labels: ParallelLabel[] } {
  const scored = study.trials.filter((t): t is TrialRecord & { objective: number } => isScore(t.objective));
  const rows: ParallelRow[] = [];
  const labels: ParallelLabel[] = [];
  const columns = [
    ...axes.map((axis) => ({ title: axis.shortTitle, axis, values: scored.map((t) => t.params[axis.key]) })),
    { title: objectiveTitle, axis: undefined, values: scored.map((t) => t.objective) },
  ];
  for (const column of columns) {
    const categories = column.axis?.kind === 'nominal' || column.axis?.kind === 'ordinal' ? categoriesOf(column.axis, column.values) : undefined;
    let positions: number[];
    if (categories) {
      const last = Math.max(categories.length - 1, 1);
      const at = (value: string | number): number => (categories.length === 1 ? 0.5 : categories.indexOf(value) / last);
      positions = column.values.map(at);
      for (const category of categories) labels.push({ axis: column.title, position: at(category), label: String(category) });
    } else {
      const log = column.axis?.kind === 'log';
      const numbers = column.values.map(Number);
      const scaled = numbers.map((v) => (log ? Math.log10(v) : v));
      const low = Math.min(...scaled);
      const high = Math.max(...scaled);
      positions = scaled.map((v) => (high > low ? (v - low) / (high - low) : 0.5));
      if (numbers.length > 0) {
        labels.push({ axis: column.title, position: high > low ? 0 : 0.5, label: shortNumber(Math.min(...numbers)) });
        if (high > low) labels.push({ axis: column.title, position: 1, label: shortNumber(Math.max(...numbers)) });
      }
    }
    scored.forEach((trial, i) => rows.push({ trialId: trial.id, axis: column.title, position: positions[i]!, objective: trial.objective }));
  }
  return { rows, labels };
}

/** The axis's categories in the space's order, then any value seen that the space does not list. */
function categoriesOf(axis: ParameterAxis, values: readonly (string | number)[]): (string | number)[] {
  const known = axis.categories ?? [];
  const seen = [...new Set(values)].filter((v) => !known.includes(v));
  return [...known, ...seen];
}

/** Configurations that reached one rung of one bracket. */
export interface RungRow {
  bracket: number;
  rung: number;
  /** "rung 1" or "rung 1 (3 epochs)" when the rung's epoch count can be read from its stopped trials. */
  rungLabel: string;
  trials: number;
}

/**
 * A trial reached every rung up to its own `rung` (every trial in the file has started). The
 * epochs of a rung are the most epochs trained by a trial that ended or paused at that rung.
 */
export function rungRows(study: StudyDocument): RungRow[] {
  const started = study.trials;
  const brackets = [...new Set(started.map((t) => t.bracket))].sort((a, b) => a - b);
  return brackets.flatMap((bracket) => {
    const inBracket = started.filter((t) => t.bracket === bracket);
    const top = Math.max(...inBracket.map((t) => t.rung));
    const rows: RungRow[] = [];
    for (let rung = 0; rung <= top; rung++) {
      const endedHere = inBracket.filter((t) => t.rung === rung && (t.status === 'stopped' || t.status === 'completed' || t.status === 'paused'));
      const epochs = endedHere.length > 0 ? Math.max(...endedHere.map((t) => t.epochsTrained)) : undefined;
      const rungLabel = epochs === undefined ? `rung ${rung}` : `rung ${rung} (${epochs} epoch${epochs === 1 ? '' : 's'})`;
      rows.push({ bracket, rung, rungLabel, trials: inBracket.filter((t) => t.rung >= rung).length });
    }
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
