import type { StudyDocument } from '../../store/types.js';
import { rankTrials } from '../../core/ranking.js';
import { curveRows, extent, robustDomain } from '../data.js';
import { metricLabel } from '../labels.js';
import { FADED, INK, WINNER_MARK, studyColour } from '../palette.js';
import { titledChart, type Chart } from './chart.js';

/** Configurations drawn in colour and named; the rest are context. */
export const HIGHLIGHTED_CURVES = 5;

/**
 * Names at the curves' ends, moved apart vertically so that none overlaps the next one ending at the
 * same epoch: at least a fifteenth of the axis between neighbours, the highest staying where it is.
 */
export function endLabels<T extends { value: number; epoch: number }>(ends: readonly T[], [low, high]: [number, number]): (T & { labelAt: number })[] {
  const gap = (high - low) / 15;
  const sorted = [...ends].sort((a, b) => a.epoch - b.epoch || b.value - a.value);
  let previous: { epoch: number; labelAt: number } | undefined;
  return sorted.map((end) => {
    const within = Math.min(Math.max(end.value, low), high);
    const labelAt = previous && previous.epoch === end.epoch ? Math.min(within, previous.labelAt - gap) : within;
    previous = { epoch: end.epoch, labelAt };
    return { ...end, labelAt };
  });
}

/**
 * The goal's metric against epoch for every trial: the top few of the ranking in the study's
 * colour and named at their last epoch, the winner in ink with a star, the rest faded. The axis is
 * cut at Tukey's far-out fences ({@link robustDomain}), so one run-away trial does not flatten the
 * rest. Null when no epoch has been recorded.
 */
export function learningCurvesChart(study: StudyDocument, colourIndex = 0, name = 'learning-curves'): Chart | null {
  const ranked = rankTrials(study.trials, study.goal).slice(0, HIGHLIGHTED_CURVES);
  const place = new Map(ranked.map(({ rank, trial }) => [trial.id, rank]));
  const rows = curveRows(study).map((row) => {
    const rank = place.get(row.trialId);
    return { ...row, group: rank === 1 ? 'winner' : rank !== undefined ? 'top' : 'other', label: rank === undefined ? '' : `#${rank} trial ${row.trialId}` };
  });
  if (rows.length === 0) return null;
  const domain = robustDomain(rows.map((r) => r.value));
  const labels = endLabels(rows.filter((r) => r.last && r.group !== 'other'), domain ?? extent(rows.map((r) => r.value)));
  const title = `Learning curves: ${metricLabel(study.goal.metric)} by epoch${name === 'learning-curves' ? '' : ` (${study.name})`}`;
  const x = { field: 'epoch', type: 'quantitative' as const, title: 'epoch', axis: { tickMinStep: 1, format: 'd' } };
  const y = { field: 'value', type: 'quantitative' as const, title: metricLabel(study.goal.metric), scale: domain ? { zero: false, domain, clamp: true } : { zero: false } };
  const line = (group: string, color: string, width: number, opacity: number) => ({
    transform: [{ filter: { field: 'group', equal: group } }],
    mark: { type: 'line' as const, color, strokeWidth: width, opacity },
    encoding: { x, y, detail: { field: 'trialId', type: 'nominal' as const }, order: { field: 'epoch', type: 'quantitative' as const } },
  });
  return titledChart(name, title, [
    `Coloured and named: the top ${HIGHLIGHTED_CURVES} of the ranking (#1, the winner, in black with a star); grey: every other trial.`,
    ...(domain ? ['Far-out values are drawn at the edge of the axis, so one run-away trial does not flatten the rest.'] : []),
  ], {
    width: 560,
    height: 300,
    data: { values: rows },
    layer: [
      line('other', FADED, 1, 0.8),
      line('top', studyColour(colourIndex), 2, 0.95),
      line('winner', INK, 2.5, 1),
      { transform: [{ filter: "datum.last && datum.group == 'top'" }], mark: { type: 'point' as const, filled: true, size: 30, color: studyColour(colourIndex) }, encoding: { x, y } },
      { transform: [{ filter: "datum.last && datum.group == 'winner'" }], mark: WINNER_MARK, encoding: { x, y } },
      {
        data: { values: labels },
        mark: { type: 'text' as const, align: 'left' as const, dx: 8, fontSize: 10, color: INK },
        encoding: { x: { ...x, field: 'epoch' }, y: { ...y, field: 'labelAt' }, text: { field: 'label', type: 'nominal' as const } },
      },
    ],
  });
}
