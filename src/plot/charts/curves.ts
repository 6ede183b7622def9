import type { StudyDocument } from '../../store/types.js';
import { curveRows, robustDomain } from '../data.js';
import { isHalving, metricLabel, statusScale } from '../labels.js';
import { CHART_CONFIG, VEGA_LITE_SCHEMA, type Chart } from './chart.js';

/**
 * The objective metric against epoch, one line per trial, coloured by the highest rung reached
 * (halving samplers) or by status (random search). Null when no epoch has been recorded.
 */
export function learningCurvesChart(study: StudyDocument): Chart | null {
  const rows = curveRows(study);
  if (rows.length === 0) return null;
  const byRung = isHalving(study.definition.sampler.kind);
  const color = byRung
    ? // The bright yellow end of viridis vanishes on white, so the scale stops short of it.
      { field: 'rung', type: 'ordinal' as const, title: 'highest rung reached', scale: { scheme: { name: 'viridis', extent: [0, 0.8] } } }
    : { field: 'status', type: 'nominal' as const, title: 'status', scale: statusScale(rows.map((r) => r.status)) };
  const title = `Learning curves: ${metricLabel(study.objective.metric)} by epoch`;
  const domain = robustDomain(rows.map((r) => r.value));
  return {
    name: 'learning-curves',
    title,
    spec: {
      $schema: VEGA_LITE_SCHEMA,
      title: {
        text: title,
        subtitle: [
          `One line per trial, with a dot where it stopped${byRung ? ' (trials stopped at a low rung end early)' : ''}.`,
          ...(domain ? ['Far-out values are drawn at the edge of the axis.'] : []),
        ],
      },
      width: 560,
      height: 300,
      data: { values: rows },
      encoding: {
        x: { field: 'epoch', type: 'quantitative', title: 'epoch', axis: { tickMinStep: 1, format: 'd' } },
        y: { field: 'value', type: 'quantitative', title: metricLabel(study.objective.metric), scale: domain ? { zero: false, domain, clamp: true } : { zero: false } },
        color,
      },
      layer: [
        {
          mark: { type: 'line', strokeWidth: 1.3, opacity: 0.7 },
          encoding: { detail: { field: 'trialId', type: 'nominal' }, order: { field: 'epoch', type: 'quantitative' } },
        },
        // A dot where each trial stopped; it also shows trials with a single epoch, whose line has no length.
        { transform: [{ filter: 'datum.last' }], mark: { type: 'point', filled: true, size: 18, opacity: 0.8 } },
      ],
      config: CHART_CONFIG,
    },
  };
}
