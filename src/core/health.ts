/**
 * Health flags: a trial whose network is broken whatever its score says. The one place that decides
 * them; the lifecycle records them on the trial, the ranking puts flagged trials after healthy ones,
 * and samplers are told a flagged result as a bad one (a null loss).
 */
import { beats, type Goal } from './configuration.js';
import type { TrialFlag, TrialRecord } from './trial.js';

/** An AUC this close to 0.5 comes from one probability for every row (constant output). */
const FLAT_AUC_TOLERANCE = 1e-9;

/** What the health check reads of a trial. */
export type HealthInput = Pick<TrialRecord, 'status' | 'score' | 'divergedAfterBest' | 'classFigures' | 'curve' | 'bestEpoch'>;

/**
 * The flags of a trial at its scored point, in a fixed order. `constantScore` is the constant
 * predictor's goal score on the same validation rows (undefined: not known, `no-lift` is not checked).
 */
export function healthFlags(trial: HealthInput, goal: Goal, constantScore: number | undefined): TrialFlag[] {
  const flags: TrialFlag[] = [];
  if (isFlat(trial)) flags.push('flat-output');
  if (trial.status === 'diverged' || trial.divergedAfterBest !== undefined) flags.push('blew-up');
  if (trial.score !== null && constantScore !== undefined && !beats(trial.score, constantScore, goal.better)) flags.push('no-lift');
  return flags;
}

/**
 * Constant or nearly constant validation predictions: a binary network whose AUC is 0.5 (one
 * probability for every row), or a multiclass network that predicts one class for every row while the
 * rows hold several. Regression has no such figure; a constant regression network does not beat the
 * training mean, which `no-lift` catches.
 */
function isFlat(trial: HealthInput): boolean {
  const point = trial.bestEpoch !== undefined ? trial.curve.find((p) => p.epoch === trial.bestEpoch) : trial.curve.at(-1);
  const auc = point?.metrics.auc;
  if (auc !== undefined) return Math.abs(auc - 0.5) <= FLAT_AUC_TOLERANCE;
  const confusion = trial.classFigures?.confusion;
  if (!confusion || confusion.length <= 2) return false;
  const trueClasses = confusion.filter((row) => row.some((n) => n > 0)).length;
  const predictedClasses = confusion[0]!.filter((_, p) => confusion.some((row) => (row[p] ?? 0) > 0)).length;
  return trueClasses > 1 && predictedClasses <= 1;
}

/** The flags in words, for tables and the progress line: "flat-output, no-lift", or "" when healthy. */
export function flagsText(flags: readonly TrialFlag[] | undefined): string {
  return (flags ?? []).join(', ');
}
