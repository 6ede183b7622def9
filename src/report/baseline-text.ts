/** The study's baselines in words, beside the winner's score. */
import { baselineScore } from '../core/baselines.js';
import { leaderOf } from '../core/ranking.js';
import type { StudyDocument } from '../store/types.js';
import { formatNumber } from './format.js';

/**
 * "baseline: a constant predictor (the training mean for every row)
 * scores auc 0.5 on the validation rows; the leader, trial 18, 0.855" or undefined for a file without baselines.
 */
export function baselineLine(doc: Pick<StudyDocument, 'baselines' | 'goal' | 'trials'>): string | undefined {
  const constant = baselineScore(doc.baselines?.constant, doc.goal.metric);
  if (constant === undefined) return undefined;
  const leader = leaderOf(doc.trials, doc.goal);
  const versus = leader ? `; the leader, trial ${leader.id}, ${formatNumber(leader.score)}` : '';
  return `baseline: a constant predictor (${doc.baselines!.constant.what}) scores ${doc.goal.metric} ${formatNumber(constant)} on the validation rows${versus}`;
}
