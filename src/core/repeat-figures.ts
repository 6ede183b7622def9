/**
 * What the repeat runs say: each repeated configuration's mean and standard error, its paired
 * difference to the winner with a 95% t interval, and the one-standard-error pick. The one place these
 * figures are computed; the ranking, report, compare and export show them.
 */
import type { Goal } from './configuration.js';
import type { RepeatsRecord } from './repeats.js';
import type { TrialRecord } from './trial.js';
import { weightCount } from './size.js';
import { isFinished, isHealthy, rankTrials } from './ranking.js';

/**
 * Two-sided 95% quantiles of Student's t distribution, t(0.975, df) for df = 1 .. 30.
 * Source: NIST/SEMATECH e-Handbook of Statistical Methods, 2012, section 1.3.6.7.2 (critical values of
 * the t distribution); values from memory, checked in test/core.repeat-figures.test.ts by integrating the
 * t density.
 */
export const T_975: readonly number[] = [
  12.706, 4.303, 3.182, 2.776, 2.571, 2.447, 2.365, 2.306, 2.262, 2.228, 2.201, 2.179, 2.16, 2.145, 2.131, 2.12, 2.11, 2.101, 2.093, 2.086, 2.08, 2.074,
  2.069, 2.064, 2.06, 2.056, 2.052, 2.048, 2.045, 2.042,
];

/** t(0.975, df); past the table, the table's last value (slightly wider than the true quantile). */
export function tQuantile975(degreesOfFreedom: number): number {
  return T_975[Math.min(degreesOfFreedom, T_975.length) - 1]!;
}

/** The paired difference of a configuration to the winner (this one minus the winner) over the runs both have. */
export interface PairedDifference {
  mean: number;
  /** The 95% paired t interval: mean ± t(0.975, pairs - 1) x s_d / sqrt(pairs). */
  low: number;
  high: number;
  pairs: number;
}

/** One repeated configuration's figures. */
export interface RepeatFigure {
  trialId: number;
  /** Its scores: the search's run first, then each further seed (null: diverged or failed); with folds, empty. */
  values: (number | null)[];
  /** Scores the mean is over (runs, or folds). */
  count: number;
  mean: number;
  /** Sample standard deviation over sqrt(count); absent with one score. */
  standardError?: number;
  /** Trainable weights of its network ({@link weightCount}). */
  weights: number;
  /** Absent for the winner itself, with folds, and with fewer than two pairs. */
  difference?: PairedDifference;
  /** True when it cannot be told apart from the winner (its paired interval holds 0); the winner itself is true. */
  indistinguishable: boolean;
}

/** The figures of the repeated configurations, the winner (rank 1) first. */
export interface RepeatSummary {
  /** `seeds`: the search's run and the further seeds' runs; `folds`: the fold scores. */
  source: 'seeds' | 'folds';
  figures: RepeatFigure[];
  winnerId: number;
  /** The configuration with the best mean. */
  bestId: number;
  /** The best mean minus (or plus, when lower is better) its standard error: the one-standard-error line. */
  line: number;
  /** The one-standard-error pick: the fewest weights among the configurations whose mean reaches the line. */
  pickId: number;
}

function meanOf(values: readonly number[]): number {
  return values.reduce((sum, v) => sum + v, 0) / values.length;
}

/** Standard error of the mean: s / sqrt(n), s with n - 1; undefined for fewer than two values. */
export function standardErrorOf(values: readonly number[]): number | undefined {
  if (values.length < 2) return undefined;
  const mean = meanOf(values);
  const variance = values.reduce((sum, v) => sum + (v - mean) ** 2, 0) / (values.length - 1);
  return Math.sqrt(variance / values.length);
}

/** The paired t interval of `values - winner` over the positions where both are numbers (Student, 1908; as in the NIST handbook, 1.3.5.3). */
export function pairedDifference(values: readonly (number | null)[], winner: readonly (number | null)[]): PairedDifference | undefined {
  const differences: number[] = [];
  values.forEach((value, i) => {
    const other = winner[i];
    if (value !== null && other !== null && other !== undefined && Number.isFinite(value) && Number.isFinite(other)) differences.push(value - other);
  });
  const se = standardErrorOf(differences);
  if (se === undefined) return undefined;
  const mean = meanOf(differences);
  const half = tQuantile975(differences.length - 1) * se;
  return { mean, low: mean - half, high: mean + half, pairs: differences.length };
}

/** A repeated configuration's scores, by run: the search's, then the further seeds' in order. */
function runScores(trial: TrialRecord, record: RepeatsRecord): (number | null)[] {
  const scores: (number | null)[] = [trial.score];
  for (let index = 1; index <= record.seeds; index++) {
    scores.push(record.runs.find((run) => run.trialId === trial.id && run.index === index)?.score ?? null);
  }
  return scores;
}

/** What the network's shape is fitted to: model inputs and outputs. */
export interface NetworkSides {
  inputs: number;
  outputs: number;
}

/** One configuration's figures from its runs' scores, or from its fold mean and standard error. */
function figureOf(trial: TrialRecord, values: (number | null)[], folds: number | undefined, sides: NetworkSides): RepeatFigure | undefined {
  // The recorded count is sized by the trial's own preprocessing choice; files from before it count the study's inputs.
  const weights = trial.weightCount ?? weightCount(trial.configuration, sides.inputs, sides.outputs);
  if (folds !== undefined) {
    if (trial.score === null) return undefined;
    return { trialId: trial.id, values: [], count: folds, mean: trial.score, ...(trial.scoreStandardError !== undefined ? { standardError: trial.scoreStandardError } : {}), weights, indistinguishable: false };
  }
  const numbers = values.filter((v): v is number => v !== null && Number.isFinite(v));
  if (numbers.length === 0) return undefined;
  const standardError = standardErrorOf(numbers);
  return { trialId: trial.id, values, count: numbers.length, mean: meanOf(numbers), ...(standardError !== undefined ? { standardError } : {}), weights, indistinguishable: false };
}

/** Marks each figure against the winner (the first) with its paired interval. */
function markAgainstWinner(figures: RepeatFigure[]): void {
  const winner = figures[0]!;
  winner.indistinguishable = true;
  for (const figure of figures.slice(1)) {
    const difference = pairedDifference(figure.values, winner.values);
    if (!difference) continue;
    figure.difference = difference;
    figure.indistinguishable = difference.low <= 0 && difference.high >= 0;
  }
}

/**
 * The one-standard-error rule (Hastie, Tibshirani, Friedman, The Elements of Statistical Learning,
 * 2nd ed., 2009, section 7.10): the best mean, its line one standard error towards worse, and the
 * configuration with the fewest weights whose mean reaches the line (ties: the better mean, then the
 * better rank).
 */
export function oneStandardErrorPick(figures: readonly RepeatFigure[], goal: Goal): { bestId: number; line: number; pickId: number } {
  const better = (a: number, b: number): boolean => (goal.better === 'higher' ? a > b : a < b);
  const best = figures.reduce((top, figure) => (better(figure.mean, top.mean) ? figure : top));
  const se = best.standardError ?? 0;
  const line = goal.better === 'higher' ? best.mean - se : best.mean + se;
  const reaches = figures.filter((figure) => (goal.better === 'higher' ? figure.mean >= line : figure.mean <= line));
  const pick = reaches.reduce((small, figure) => (figure.weights < small.weights || (figure.weights === small.weights && better(figure.mean, small.mean)) ? figure : small));
  return { bestId: best.trialId, line, pickId: pick.trialId };
}

/**
 * The repeat summary of a study, or undefined when it has none: `record` the study file's repeat runs
 * (seeds), or `folds` the fold count (fold scores) with `top` the configurations to take.
 */
export function repeatSummary(trials: readonly TrialRecord[], goal: Goal, sides: NetworkSides, from: { record: RepeatsRecord } | { folds: number; trialIds: readonly number[] }): RepeatSummary | undefined {
  const byId = new Map(trials.map((t) => [t.id, t]));
  const ids = 'record' in from ? from.record.trialIds : from.trialIds;
  const figures: RepeatFigure[] = [];
  for (const id of ids) {
    const trial = byId.get(id);
    if (!trial) continue;
    const figure = 'record' in from ? figureOf(trial, runScores(trial, from.record), undefined, sides) : figureOf(trial, [], from.folds, sides);
    if (figure) figures.push(figure);
  }
  if (figures.length === 0) return undefined;
  if ('record' in from) markAgainstWinner(figures);
  else figures[0]!.indistinguishable = true;
  return { source: 'record' in from ? 'seeds' : 'folds', figures, winnerId: figures[0]!.trialId, ...oneStandardErrorPick(figures, goal) };
}

/** The configurations the repeat runs take: the best `top` finished, healthy trials of the one ranking. */
export function repeatCandidates(trials: readonly TrialRecord[], goal: Goal, top: number): TrialRecord[] {
  return rankTrials(trials.filter((t) => isFinished(t) && isHealthy(t)), goal)
    .slice(0, top)
    .map((r) => r.trial);
}

/** Epochs a repeat run trains: the trial's scored epochs (its best epoch with early stopping). */
export function repeatEpochs(trial: Pick<TrialRecord, 'bestEpoch' | 'epochsTrained'>): number {
  return trial.bestEpoch ?? trial.epochsTrained;
}
