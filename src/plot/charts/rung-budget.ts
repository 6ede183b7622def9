import type { StudyDocument } from '../../store/types.js';
import { rungShares } from '../analysis/budget.js';
import { extent } from '../data.js';
import { isHalving } from '../labels.js';
import { INK, rungScale } from '../palette.js';
import { titledChart, type Chart } from './chart.js';

/**
 * How the epochs spent split over the rungs: one stacked bar per bracket (and study), each rung's
 * part in its rung colour and labelled with its share. Null when no study uses a halving sampler.
 */
export function rungBudgetChart(studies: readonly StudyDocument[]): Chart | null {
  const halving = studies.filter((s) => isHalving(s.definition.sampler.kind));
  const rows = halving.flatMap((study) =>
    rungShares(study).map((share) => ({
      ...share,
      row: `${halving.length > 1 ? `${study.name}, ` : ''}bracket ${share.bracket}`,
      percent: `${Math.round(share.share * 100)}%`,
      detail: `rung ${share.rung}: ${share.configurations} configurations to ${share.rungEpochs} epochs, ${share.epochs} epochs trained`,
    })),
  );
  if (rows.length === 0) return null;
  const top = extent(rows.map((r) => r.rung))[1];
  const title = 'Share of the compute each rung took';
  const subtitle = 'Epochs trained at each rung, as a share of all epochs the study trained. Rung 0 is the first, cheapest look at a configuration.';
  return titledChart('rung-budget', title, subtitle, {
    width: 560,
    height: { step: 30 },
    data: { values: rows },
    encoding: {
      y: { field: 'row', type: 'nominal', title: null, sort: null },
      x: { field: 'share', type: 'quantitative', title: 'share of all epochs trained', stack: 'zero', axis: { format: '.0%' }, scale: { domain: [0, 1] } },
      order: { field: 'rung', type: 'quantitative' },
    },
    layer: [
      {
        mark: { type: 'bar', stroke: 'white', strokeWidth: 1 },
        encoding: {
          color: { field: 'rung', type: 'ordinal', title: 'rung', scale: rungScale(top), legend: { orient: 'bottom', direction: 'horizontal' } },
          tooltip: [{ field: 'detail', type: 'nominal' }],
        },
      },
      {
        transform: [{ filter: 'datum.share >= 0.06' }],
        mark: { type: 'text', fontSize: 11, dx: -3, align: 'right' },
        // Dark rungs carry white text.
        encoding: { text: { field: 'percent', type: 'nominal' }, color: { condition: { test: 'datum.rung >= 3', value: 'white' }, value: INK } },
      },
    ],
  });
}
