import type { StudyDocument } from '../../store/types.js';
import { parallelData } from '../data.js';
import { metricLabel, variedParameterAxes } from '../labels.js';
import { CHART_CONFIG, VEGA_LITE_SCHEMA, type Chart } from './chart.js';

/**
 * Parallel coordinates: one vertical axis per varied hyperparameter plus the objective, each scaled
 * to [0, 1] on its own (see `parallelData`), one line per scored trial coloured by its objective.
 * The better end of the colour scale is bright in both directions. Null when no trial has a score.
 */
export function parallelChart(study: StudyDocument): Chart | null {
  const axes = variedParameterAxes(study);
  const objectiveTitle = metricLabel(study.objective.metric);
  const { rows, labels } = parallelData(study, axes, objectiveTitle);
  if (rows.length === 0) return null;
  const axisOrder = [...axes.map((a) => a.shortTitle), objectiveTitle];
  const x = {
    field: 'axis',
    type: 'nominal' as const,
    title: null,
    scale: { domain: axisOrder, padding: 0.3 },
    // Axis names break at spaces so long ones need not be cut short.
    axis: { orient: 'bottom' as const, labelAngle: 0, labelExpr: "split(datum.label, ' ')", labelLimit: 0, domain: false, ticks: false, labelPadding: 8 },
  };
  // A little room beyond 0 and 1 keeps the extreme lines off the frame.
  const scale = { domain: [-0.03, 1.03], nice: false };
  const y = { field: 'position', type: 'quantitative' as const, scale, axis: null };
  const title = 'Hyperparameters of every scored trial (parallel coordinates)';
  return {
    name: 'parallel',
    title,
    spec: {
      $schema: VEGA_LITE_SCHEMA,
      title: {
        text: title,
        subtitle: 'Each axis runs from its lowest value (bottom) to its highest (top); categories are spaced evenly in the order listed.',
      },
      width: Math.max(560, 105 * axisOrder.length),
      // The labels feed six layers (three placements, each outlined then inked), so they are stored once.
      datasets: { labels },
      height: 300,
      layer: [
        {
          data: { values: axisOrder.map((axis) => ({ axis })) },
          mark: { type: 'rule', color: '#9aa0a6' },
          encoding: { x, y: { datum: 0, type: 'quantitative' as const, scale, axis: null }, y2: { datum: 1 } },
        },
        {
          data: { values: rows },
          mark: { type: 'line', strokeWidth: 1.2, opacity: 0.65 },
          encoding: {
            x,
            y,
            detail: { field: 'trialId', type: 'nominal' as const },
            color: {
              field: 'objective',
              type: 'quantitative' as const,
              title: objectiveTitle,
              scale: { scheme: 'viridis', reverse: study.objective.direction === 'minimize' },
            },
          },
        },
        // The top value hangs below the axis end and the bottom value sits above it. Each label is
        // drawn twice, first with a thick white outline, so it stays legible over the lines.
        ...(
          [
            ['datum.position >= 1', 'top'],
            ['datum.position <= 0', 'bottom'],
            ['datum.position > 0 && datum.position < 1', 'middle'],
          ] as const
        ).flatMap(([test, baseline]) =>
          [{ stroke: 'white', strokeWidth: 3, strokeOpacity: 0.9 }, {}].map((outline) => ({
            data: { name: 'labels' },
            transform: [{ filter: test }],
            mark: { type: 'text' as const, align: 'left' as const, baseline, dx: 4, fontSize: 10, color: '#222', ...outline },
            encoding: { x, y, text: { field: 'label', type: 'nominal' as const } },
          })),
        ),
      ],
      config: CHART_CONFIG,
    },
  };
}
