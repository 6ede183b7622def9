import type { StudyDocument } from '../../store/types.js';
import { progressRows, robustDomain } from '../data.js';
import { metricLabel, objectiveLabel, statusScale } from '../labels.js';
import { CHART_CONFIG, VEGA_LITE_SCHEMA, type Chart } from './chart.js';

/**
 * Each finished trial's objective in the order trials finished, coloured by status, under a step
 * line of the best objective so far. Null when no finished trial has a score yet.
 */
export function progressChart(study: StudyDocument): Chart | null {
  const rows = progressRows(study);
  if (rows.length === 0) return null;
  const finished = study.trials.filter((t) => t.endedAt !== undefined).length;
  const unscored = finished - rows.length;
  const subtitle = [
    `Points: each trial's ${metricLabel(study.objective.metric)} when it ended. Line: the best so far.`,
    ...(unscored > 0 ? [`${unscored} finished trial${unscored === 1 ? '' : 's'} without a score (diverged or failed) not shown.`] : []),
  ];
  const x = { field: 'order', type: 'quantitative' as const, title: 'trials finished (in order of finishing)', axis: { tickMinStep: 1, format: 'd' } };
  const domain = robustDomain(rows.map((r) => r.objective));
  if (domain) subtitle.push('Far-out values are drawn at the edge of the axis.');
  const y = { type: 'quantitative' as const, title: objectiveLabel(study.objective), scale: domain ? { zero: false, domain, clamp: true } : { zero: false } };
  return {
    name: 'progress',
    title: 'Objective of each trial, in order of finishing',
    spec: {
      $schema: VEGA_LITE_SCHEMA,
      title: { text: 'Objective of each trial, in order of finishing', subtitle },
      width: 560,
      height: 300,
      data: { values: rows },
      layer: [
        {
          mark: { type: 'line', interpolate: 'step-after', color: '#222', strokeWidth: 1.5 },
          encoding: { x, y: { ...y, field: 'bestSoFar' } },
        },
        {
          mark: { type: 'point', filled: true, size: 45, opacity: 0.85 },
          encoding: {
            x,
            y: { ...y, field: 'objective' },
            color: { field: 'status', type: 'nominal', title: 'status', scale: statusScale(rows.map((r) => r.status)) },
          },
        },
      ],
      config: CHART_CONFIG,
    },
  };
}
