/**
 * The health flags of a study in words: how many trials carry each flag, and which region of the
 * space produced them (optimizer by learning-rate decade), for the summary, the report and compare.
 */
import type { TrialFlag, TrialRecord } from '../core/trial.js';
import { formatNumber } from './format.js';

/** One cell of the space: an optimizer and a decade of learning rates, with its flagged share. */
export interface FlaggedRegion {
  optimizer: string;
  /** The decade [from, to) of learning rates. */
  from: number;
  to: number;
  flagged: number;
  trials: number;
}

const FLAG_ORDER: readonly TrialFlag[] = ['flat-output', 'blew-up', 'no-lift', 'too-slow'];

/** Cells of optimizer by learning-rate decade that hold a flagged trial, most flagged share first (then most flagged, then name). */
export function flaggedRegions(trials: readonly TrialRecord[]): FlaggedRegion[] {
  const cells = new Map<string, FlaggedRegion>();
  for (const trial of trials) {
    const { optimizer, learningRate } = trial.configuration;
    const decade = Math.floor(Math.log10(learningRate) + 1e-9);
    const key = `${optimizer}/${decade}`;
    const cell = cells.get(key) ?? { optimizer, from: 10 ** decade, to: 10 ** (decade + 1), flagged: 0, trials: 0 };
    cell.trials++;
    if ((trial.flags?.length ?? 0) > 0) cell.flagged++;
    cells.set(key, cell);
  }
  return [...cells.values()]
    .filter((cell) => cell.flagged > 0)
    .sort((a, b) => b.flagged / b.trials - a.flagged / a.trials || b.flagged - a.flagged || a.optimizer.localeCompare(b.optimizer) || a.from - b.from);
}

/**
 * One line on the flagged trials, or undefined when none is flagged:
 * "health: 7 of 28 trials flagged (blew-up 2, no-lift 5); most in sgd at learning rate 1 to 10 (5 of 6), ...".
 */
export function healthSummary(trials: readonly TrialRecord[], regions = 3): string | undefined {
  const flagged = trials.filter((t) => (t.flags?.length ?? 0) > 0);
  if (flagged.length === 0) return undefined;
  const counts = FLAG_ORDER.map((flag) => [flag, flagged.filter((t) => t.flags!.includes(flag)).length] as const).filter(([, n]) => n > 0);
  const where = flaggedRegions(trials)
    .slice(0, regions)
    .map((cell) => `${cell.optimizer} at learning rate ${formatNumber(cell.from)} to ${formatNumber(cell.to)} (${cell.flagged} of ${cell.trials})`);
  return `health: ${flagged.length} of ${trials.length} trials flagged (${counts.map(([flag, n]) => `${flag} ${n}`).join(', ')}); most in ${where.join(', ')}`;
}
