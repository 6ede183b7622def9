/** The study's baselines in words, beside the leader's score, and the warning when the leader does not clearly beat the linear model. */
import { baselineScore } from '../core/baselines.js';
import { beats } from '../core/configuration.js';
import { leaderOf } from '../core/ranking.js';
import type { StudyDocument } from '../store/types.js';
import { formatNumber } from './format.js';
import type { RepeatSummary } from '../core/repeat-figures.js';

type BaselineDoc = Pick<StudyDocument, 'baselines' | 'goal' | 'trials'>;

/**
 * "baselines on the validation rows (auc): constant 0.5, linear 0.763; the leader, trial 18, 0.855",
 * or undefined for a file without baselines.
 */
export function baselineLine(doc: BaselineDoc, repeats?: RepeatSummary): string | undefined {
  const constant = baselineScore(doc.baselines?.constant, doc.goal.metric);
  if (constant === undefined) return undefined;
  const linear = baselineScore(doc.baselines?.linear, doc.goal.metric);
  const leader = leaderOf(doc.trials, doc.goal);
  const repeated = leader && repeats?.winnerId === leader.id ? repeats.figures[0] : undefined;
  const noise = repeated?.standardError !== undefined ? ` (mean ${formatNumber(repeated.mean)} ± ${formatNumber(repeated.standardError)} over ${repeated.count} runs)` : '';
  const versus = leader ? `; the leader, trial ${leader.id}, ${formatNumber(leader.score)}${noise}` : '';
  const linearText = linear === undefined ? '' : `, linear ${formatNumber(linear)}`;
  return `baselines on the validation rows (${doc.goal.metric}): constant ${formatNumber(constant)}${linearText}${versus}`;
}

/**
 * The warning when the leader does not beat the linear baseline by more than its standard error, or
 * undefined. With repeat runs (`repeats`, whose winner is the leader) the leader's mean over its runs
 * and their standard error; else its score and the fold standard error with folds, else 0.
 */
export function linearBaselineWarning(doc: BaselineDoc, repeats?: RepeatSummary): string | undefined {
  const linear = baselineScore(doc.baselines?.linear, doc.goal.metric);
  const leader = leaderOf(doc.trials, doc.goal);
  if (linear === undefined || !leader) return undefined;
  const repeated = repeats?.winnerId === leader.id ? repeats.figures[0] : undefined;
  const score = repeated?.mean ?? leader.score;
  const margin = (repeated ? repeated.standardError : leader.scoreStandardError) ?? 0;
  const shifted = doc.goal.better === 'higher' ? score - margin : score + margin;
  if (beats(shifted, linear, doc.goal.better)) return undefined;
  const by = margin > 0 ? ` by more than its standard error (${formatNumber(margin)}${repeated ? `, over ${repeated.count} runs` : ''})` : '';
  const what = repeated ? `mean ${doc.goal.metric} ${formatNumber(score)}` : `${doc.goal.metric} ${formatNumber(score)}`;
  return `warning: the leader (trial ${leader.id}, ${what}) does not beat the linear baseline (${formatNumber(linear)})${by}; a network may not be worth it here`;
}
