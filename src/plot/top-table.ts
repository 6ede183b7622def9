import { scheduleInWords } from '../core/schedule.js';
import { regularisersInWords } from '../core/regularisers.js';
import { formatNumber } from '../report/format.js';
import { scoreText } from '../report/ranking-table.js';
import type { StudyDocument } from '../store/types.js';
import type { TrialRecord } from '../core/trial.js';
import type { MetricName } from '../core/configuration.js';
import { rankTrials } from '../core/ranking.js';
import { flagsText } from '../core/health.js';
import { WINNER_SYMBOL } from './palette.js';

/** Configurations listed at the top of the report. */
export const TOP_CONFIGURATIONS = 8;

/** One row of the top-configurations table, as text. */
export type TableRow = Record<string, string>;

/** The metrics recorded at a trial's scored point, other than the goal's. */
function otherMetrics(trial: TrialRecord, goalMetric: MetricName): [MetricName, number][] {
  const point = trial.curve.find((p) => p.epoch === trial.epochsTrained);
  if (!point) return [];
  return (Object.entries(point.metrics) as [MetricName, number][]).filter(([name, value]) => name !== goalMetric && Number.isFinite(value));
}

/** Trials that trained the same configuration to the same epochs: repeats of one another. */
function repeatsOf(study: StudyDocument, trial: TrialRecord): number[] {
  const key = JSON.stringify(trial.configuration);
  return rankTrials(study.trials, study.goal)
    .filter(({ trial: other }) => other.epochsTrained === trial.epochsTrained && JSON.stringify(other.configuration) === key)
    .map(({ trial: other }) => other.score);
}

/**
 * The top of the one ranking as table rows: place (the winner starred), trial, score, the gap
 * to the winner, epochs, worker seconds, the other metrics at the scored point, the hyperparameters,
 * and the spread over repeats of the same configuration where the study has any.
 */
export function topConfigurations(study: StudyDocument, top = TOP_CONFIGURATIONS): { header: string[]; rows: TableRow[] } {
  const ranked = rankTrials(study.trials, study.goal).slice(0, top);
  const leader = ranked[0]?.trial;
  const metricNames = [...new Set(ranked.flatMap(({ trial }) => otherMetrics(trial, study.goal.metric).map(([name]) => name)))];
  const anyRepeats = ranked.some(({ trial }) => repeatsOf(study, trial).length > 1);
  const anyFlags = ranked.some(({ trial }) => (trial.flags?.length ?? 0) > 0);
  const rows = ranked.map(({ rank, trial }): TableRow => {
    const metrics = new Map(otherMetrics(trial, study.goal.metric));
    const p = trial.configuration;
    const row: TableRow = {
      place: rank === 1 ? `${WINNER_SYMBOL} 1` : String(rank),
      trial: String(trial.id),
      [study.goal.metric]: scoreText(trial.score, trial.scoreStandardError),
      'gap to #1': rank === 1 || !leader ? '' : formatNumber(trial.score - leader.score!),
      epochs: String(trial.epochsTrained) + (trial.bestEpoch !== undefined ? ` (best ${trial.bestEpoch}${trial.stoppedEarly ? ', stopped' : ''})` : ''),
      'worker s': formatNumber(trial.workerSeconds),
      ...Object.fromEntries(metricNames.map((name) => [name, formatNumber(metrics.get(name))])),
      configuration: `${p.depth} x ${p.width} ${p.activation}, ${p.optimizer} at learning rate ${formatNumber(p.learningRate)}, batch ${p.batchSize}, L2 ${formatNumber(p.l2)}, dropout ${formatNumber(p.dropout)}${p.schedule ? `, schedule ${scheduleInWords(p)}` : ''}${regularisersInWords(p) ? `, ${regularisersInWords(p)}` : ''}`,
    };
    if (anyFlags) row.flags = flagsText(trial.flags) || '-';
    if (anyRepeats) {
      const scores = repeatsOf(study, trial);
      row['repeats (range)'] = scores.length > 1 ? `${scores.length} (${formatNumber(Math.min(...scores))} to ${formatNumber(Math.max(...scores))})` : '1';
    }
    return row;
  });
  return { header: rows[0] ? Object.keys(rows[0]) : [], rows };
}
