import type { StudyDocument } from '../../store/types.js';
import { rungRows } from '../data.js';
import { isHalving } from '../labels.js';
import { CHART_CONFIG, VEGA_LITE_SCHEMA, type Chart } from './chart.js';

/**
 * Configurations that reached each rung, one bar per rung (one panel per bracket when there are
 * several, as with Hyperband). Null for random search or when no trial has started.
 */
export function rungsChart(study: StudyDocument): Chart | null {
  if (!isHalving(study.definition.sampler.kind)) return null;
  const rows = rungRows(study);
  if (rows.length === 0) return null;
  const brackets = [...new Set(rows.map((r) => r.bracket))];
  const title = brackets.length > 1 ? 'Configurations that reached each rung, per bracket' : 'Configurations that reached each rung';
  const subtitle = `${study.definition.sampler.kind} sampler: a configuration that reached a rung also counts at every rung below it.`;
  const panel = {
    width: { step: 80 },
    height: 200,
    encoding: {
      x: {
        field: 'rungLabel',
        type: 'ordinal' as const,
        title: 'rung (epochs trained by then)',
        sort: { field: 'rung', op: 'min' as const },
        // "rung 1 (3 epochs)" is drawn on two lines so neighbouring labels do not collide.
        axis: { labelAngle: 0, labelExpr: "split(replace(datum.label, ' (', '|('), '|')" },
      },
      // Headroom above the tallest bar keeps its count inside the plot.
      y: {
        field: 'trials',
        type: 'quantitative' as const,
        title: 'configurations',
        scale: { domainMax: Math.ceil(Math.max(...rows.map((r) => r.trials)) * 1.15) },
        axis: { tickMinStep: 1, format: 'd' },
      },
    },
    layer: [
      { mark: { type: 'bar' as const, color: '#2f6fb3', width: { band: 0.7 } } },
      { mark: { type: 'text' as const, dy: -6, fontSize: 11, color: '#222' }, encoding: { text: { field: 'trials', type: 'quantitative' as const } } },
    ],
  };
  const common = { $schema: VEGA_LITE_SCHEMA, title: { text: title, subtitle }, data: { values: rows }, config: CHART_CONFIG };
  const spec =
    brackets.length === 1
      ? { ...common, ...panel }
      : {
          ...common,
          columns: 4,
          concat: brackets.map((bracket) => ({
            ...panel,
            title: { text: `bracket ${bracket}`, fontSize: 12 },
            transform: [{ filter: { field: 'bracket', equal: bracket } }],
          })),
          resolve: { scale: { y: 'shared' as const } },
        };
  return { name: 'rungs', title, spec };
}
