import type { StudyDocument } from '../../store/types.js';
import { parameterRows } from '../data.js';
import { metricLabel, objectiveLabel, statusScale, variedParameterAxes, type ParameterAxis } from '../labels.js';
import { CHART_CONFIG, VEGA_LITE_SCHEMA, type Chart } from './chart.js';

const PANEL_WIDTH = 200;
const PANEL_HEIGHT = 150;

/**
 * A log axis from the power of `base` at or below the smallest value to the one at or above the
 * largest, ticked at each power: learning rates read as 1e-4, 1e-3; widths as 8, 16, 32.
 */
export function logAxisDomain(values: readonly number[], base: number): { domain: [number, number]; ticks: number[] } {
  const low = Math.floor(Math.log(Math.min(...values)) / Math.log(base) + 1e-9);
  const high = Math.ceil(Math.log(Math.max(...values)) / Math.log(base) - 1e-9);
  const ticks: number[] = [];
  for (let power = low; power <= Math.max(high, low + 1); power++) ticks.push(Number((base ** power).toPrecision(12)));
  return { domain: [ticks[0]!, ticks.at(-1)!], ticks };
}

/** The x encoding of one panel: log, linear or categorical in the space's order. */
function xEncoding(axis: ParameterAxis, values: readonly number[]) {
  const base = { field: axis.key, title: axis.title };
  switch (axis.kind) {
    case 'log': {
      // Widths are counted in units, so they tick at powers of two; rates and penalties at powers of ten.
      const powersOfTwo = axis.key === 'width';
      const { domain, ticks } = logAxisDomain(values, powersOfTwo ? 2 : 10);
      return {
        ...base,
        type: 'quantitative' as const,
        scale: { type: 'log' as const, domain, nice: false },
        // Up to six labels fit a panel; vega's own overlap pruning was seen to drop labels that did fit.
        axis: { values: ticks.filter((_, i) => ticks.length <= 6 || i % 2 === 0), labelOverlap: false, format: powersOfTwo ? 'd' : '.0e', grid: true },
      };
    }
    case 'linear':
      return { ...base, type: 'quantitative' as const, scale: { zero: false } };
    case 'ordinal':
    case 'nominal':
      return { ...base, type: axis.kind, sort: axis.categories?.map(String), axis: { labelAngle: 0, labelLimit: 70 } };
  }
}

/**
 * The objective against each hyperparameter that varies, one panel each, sharing the objective
 * axis so panels compare. Null when no trial has a score or nothing varies.
 */
export function parametersChart(study: StudyDocument): Chart | null {
  const rows = parameterRows(study);
  const axes = variedParameterAxes(study);
  if (rows.length === 0 || axes.length === 0) return null;
  // Categories are matched as text so numeric choices (batch size, depth) sort in the space's order.
  const values = rows.map((row) => ({ ...row, depth: String(row.depth), batchSize: String(row.batchSize) }));
  const color = { field: 'status', type: 'nominal' as const, title: 'status', scale: statusScale(rows.map((r) => r.status)) };
  const metric = metricLabel(study.objective.metric);
  const title = `${metric.charAt(0).toUpperCase()}${metric.slice(1)} against each hyperparameter`;
  return {
    name: 'parameters',
    title,
    spec: {
      $schema: VEGA_LITE_SCHEMA,
      title: { text: title, subtitle: `One point per scored trial; the vertical axis is the same in every panel (${objectiveLabel(study.objective)}).` },
      data: { values },
      columns: 4,
      concat: axes.map((axis) => ({
        width: PANEL_WIDTH,
        height: PANEL_HEIGHT,
        mark: { type: 'point' as const, filled: true, size: 35, opacity: 0.75 },
        encoding: {
          x: xEncoding(axis, rows.map((row) => Number(row[axis.key]))),
          y: { field: 'objective', type: 'quantitative' as const, title: metricLabel(study.objective.metric), scale: { zero: false } },
          color,
        },
      })),
      resolve: { scale: { y: 'shared', color: 'shared' } },
      config: CHART_CONFIG,
    },
  };
}
