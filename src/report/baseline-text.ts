/** The study's baselines in words, beside the leader's score, and the warning when the leader does not clearly beat the linear model. */
import { baselineScore } from '../core/baselines.js';
import { beats } from '../core/configuration.js';
import { leaderOf } from '../core/ranking.js';
import type { StudyDocument } from '../store/types.js';
import { formatNumber } from './format.js';

type BaselineDoc = Pick<StudyDocument, 'baselines' | 'goal' | 'trials'>;

/**
 * "baselines on the validation rows (auc): constant 0.5, linear 0.763; the leader, trial 18, 0.855",
 * or undefined for a file without baselines.
 */
export function baselineLine(doc: BaselineDoc): string | undefined {
  const constant = baselineScore(doc.baselines?.constant, doc.goal.metric);
  if (constant === undefined) return undefined;
  const linear = baselineScore(doc.baselines?.linear, doc.goal.metric);
  const leader = leaderOf(doc.trials, doc.goal);
  const versus = leader ? `; the leader, trial ${leader.id}, ${formatNumber(leader.score)}` : '';
  const linearText = linear === undefined ? '' : `, linear ${formatNumber(linear)}`;
  return `baselines on the validation rows (${doc.goal.metric}): constant ${formatNumber(constant)}${linearText}${versus}`;
}

/**
 * The warning when the leader does not beat the linear baseline by more than its standard error (the
 * fold standard error with folds, else 0), or undefined.
 */
export function linearBaselineWarning(doc: BaselineDoc): string | undefined {
  const linear = baselineScore(doc.baselines?.linear, doc.goal.metric);
  const leader = leaderOf(doc.trials, doc.goal);
  if (linear === undefined || !leader) return undefined;
  const margin = leader.scoreStandardError ?? 0;
  const shifted = doc.goal.better === 'higher' ? leader.score - margin : leader.score + margin;
  if (beats(shifted, linear, doc.goal.better)) return undefined;
  const by = margin > 0 ? ` by more than its standard error (${formatNumber(margin)})` : '';
  return `warning: the leader (trial ${leader.id}, ${doc.goal.metric} ${formatNumber(leader.score)}) does not beat the linear baseline (${formatNumber(linear)})${by}; a network may not be worth it here`;
}
