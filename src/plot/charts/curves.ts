import type { StudyDocument } from '../../store/types.js';
import { rankTrials } from '../../core/ranking.js';
import { curveRows, epochSummaries, robustDomain } from '../data.js';
import { metricLabel } from '../labels.js';
import { INK, REFERENCE, SUMMARY_BAND, WINNER_MARK, placeColour } from '../palette.js';
import { titledChart, type Chart, type ChartBody } from './chart.js';
import { referenceLayers, withReferences, type ChartReferences } from './references.js';

/** Configurations drawn in colour and named; the rest are summarised. */
export const HIGHLIGHTED_CURVES = 5;

/**
 * What training looked like: the top five of the ranking as curves in five distinct colours (the
 * winner in ink with a star), every trial together as a grey band (the middle 80% of the scores
 * recorded at each epoch) with its median dashed, and, when trials stopped at different epochs, a
 * strip below on the same epoch axis of how many trials reached each epoch. A study of 10,000
 * trials draws no more lines than one of ten. The winner's noise band and baselines are drawn when
 * `references` has them. The axis is cut at Tukey's far-out fences ({@link robustDomain}). Null when
 * no epoch has been recorded.
 */
export function learningCurvesChart(study: StudyDocument, references: ChartReferences = {}, name = 'learning-curves'): Chart | null {
  const all = curveRows(study);
  if (all.length === 0) return null;
  const ranked = rankTrials(study.trials, study.goal).slice(0, HIGHLIGHTED_CURVES);
  const place = new Map(ranked.map(({ rank, trial }) => [trial.id, rank]));
  const names = ranked.map(({ rank, trial }) => `#${rank} trial ${trial.id}`);
  const top = all.flatMap((row) => {
    const rank = place.get(row.trialId);
    return rank === undefined ? [] : [{ epoch: row.epoch, value: row.value, last: row.last, place: rank, trial: names[rank - 1]! }];
  });
  const summary = epochSummaries(all);
  const domain = withReferences(robustDomain([...summary.flatMap((s) => [s.low, s.median, s.high]), ...top.map((r) => r.value)]), references);
  const metric = metricLabel(study.goal.metric);
  const x = { field: 'epoch', type: 'quantitative' as const, title: 'epoch', axis: { tickMinStep: 1, format: 'd' } };
  const y = { field: 'value', type: 'quantitative' as const, title: metric, scale: domain ? { zero: false, domain, clamp: true } : { zero: false } };
  const colour = { field: 'trial', type: 'nominal' as const, title: 'place in the ranking', sort: names, scale: { domain: names, range: names.map((_, i) => placeColour(i + 1)) }, legend: { orient: 'right' as const } };
  const curves = {
    width: 560,
    height: 300,
    layer: [
      ...referenceLayers(references, y, 560),
      {
        data: { values: summary },
        mark: { type: 'area', color: SUMMARY_BAND, opacity: 0.9 },
        encoding: { x, y: { ...y, field: 'low' }, y2: { field: 'high' }, tooltip: [{ field: 'epoch', title: 'epoch' }, { field: 'count', title: 'trials' }, { field: 'low', title: '10th percentile', format: '.4' }, { field: 'median', title: 'median', format: '.4' }, { field: 'high', title: '90th percentile', format: '.4' }] },
      },
      { data: { values: summary }, mark: { type: 'line', color: REFERENCE, strokeDash: [4, 3], strokeWidth: 1 }, encoding: { x, y: { ...y, field: 'median' } } },
      {
        data: { values: top },
        mark: { type: 'line', strokeWidth: 2 },
        encoding: { x, y, color: colour, detail: { field: 'trial', type: 'nominal' }, order: { field: 'epoch', type: 'quantitative' }, strokeWidth: { condition: { test: 'datum.place === 1', value: 2.8 }, value: 1.8 } },
      },
      { data: { values: top }, mark: { type: 'point', filled: true, size: 14, opacity: 0.9 }, encoding: { x, y, color: colour, tooltip: [{ field: 'trial', title: 'trial' }, { field: 'epoch', title: 'epoch' }, { field: 'value', title: metric, format: '.4' }] } },
      { data: { values: top }, transform: [{ filter: 'datum.last && datum.place === 1' }], mark: WINNER_MARK, encoding: { x, y } },
    ],
  };
  const counts = new Set(summary.map((s) => s.count));
  const reached = {
    width: 560,
    height: 60,
    title: { text: 'Trials that reached each epoch', fontSize: 11, fontWeight: 'normal' as const, color: INK },
    data: { values: summary },
    transform: [{ calculate: 'datum.epoch - 0.4', as: 'from' }, { calculate: 'datum.epoch + 0.4', as: 'to' }],
    mark: { type: 'rect', color: REFERENCE },
    encoding: { x: { ...x, field: 'from' }, x2: { field: 'to' }, y: { field: 'count', type: 'quantitative', title: 'trials', axis: { tickCount: 2 } }, tooltip: [{ field: 'epoch', title: 'epoch' }, { field: 'count', title: 'trials' }] },
  };
  const title = `What training looked like: ${metric} by epoch${name === 'learning-curves' ? '' : ` (${study.name})`}`;
  return titledChart(name, title, [
    `Coloured: the top ${HIGHLIGHTED_CURVES} of the ranking, #1 (the winner) in black with a star. Grey band: the middle 80% of all trials' scores at each epoch,`,
    'dashed: their median. Hover a point for its figures.',
    ...(counts.size > 1 ? ['Trials stopped at different epochs, so the band after a rung holds only the trials that went on (the bars below say how many).'] : []),
    ...(domain ? ['Far-out values are drawn at the edge of the axis, so one run-away trial does not flatten the rest.'] : []),
  ], (counts.size > 1 ? { vconcat: [curves, reached], resolve: { scale: { x: 'shared' } } } : curves) as ChartBody, counts.size > 1 ? { concat: { spacing: 10 } } : {});
}
