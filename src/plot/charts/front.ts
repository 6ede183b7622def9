import type { StudyDocument } from '../../store/types.js';
import { rankTrials } from '../../core/ranking.js';
import { frontOf, secondValue } from '../../core/front.js';
import { isFinished, isHealthy } from '../../core/ranking.js';
import { formatNumber } from '../../report/format.js';
import { metricLabel } from '../labels.js';
import { FADED, INK, WINNER_MARK } from '../palette.js';
import { referenceLayers, type ChartReferences } from './references.js';
import { titledChart, type Chart, type ChartLayer } from './chart.js';

/** The front's colour: the second place colour of the ranking's palette. */
const FRONT_COLOUR = '#d55e00';

/**
 * What a smaller (or faster) network costs in score: every finished, unflagged trial's score against
 * its weight count (or time per row), on a log axis; the front (the configurations no other beats
 * on both) joined as a step line and numbered by place; the winner's star; the winner's band of one
 * standard error when the study has one (folds, or repeat runs a caller passes). Null unless the
 * study names a second goal (`footprint.against`) and some trial is on the front.
 */
export function frontChart(study: StudyDocument, references: ChartReferences = {}): Chart | null {
  const against = study.definition.footprint?.against;
  if (against === undefined) return null;
  const ranking = rankTrials(study.trials, study.goal);
  const front = frontOf(ranking, study.goal, against);
  if (front.length === 0) return null;
  const onFront = new Map(front.map((member) => [member.ranked.trial.id, member.place]));
  const metric = metricLabel(study.goal.metric);
  const unit = against === 'weights' ? 'weights' : 'µs per row';
  const rows = ranking
    .filter(({ trial }) => isFinished(trial) && isHealthy(trial) && secondValue(trial, against) !== undefined)
    .map(({ rank, trial }) => {
      const value = secondValue(trial, against)!;
      const place = onFront.get(trial.id);
      return { value, score: trial.score, rank, place: place ?? 0, label: `#${rank} trial ${trial.id}: ${metric} ${formatNumber(trial.score)}, ${formatNumber(value)} ${unit}, depth ${trial.configuration.depth} width ${trial.configuration.width}${place ? `, place ${place} on the front` : ''}` };
    });
  const x = { field: 'value', type: 'quantitative' as const, title: against === 'weights' ? 'weights and biases (log scale)' : 'microseconds per row (log scale)', scale: { type: 'log' as const } };
  const y = { field: 'score', type: 'quantitative' as const, title: `${metric} (${study.goal.better} is better)`, scale: { zero: false } };
  const tooltip = [{ field: 'label', type: 'nominal' as const, title: 'configuration' }];
  const layers: ChartLayer[] = [
    ...referenceLayers(references, y, 560),
    { data: { values: rows.filter((r) => r.place === 0) }, mark: { type: 'point', filled: true, size: 30, color: FADED, opacity: 1 }, encoding: { x, y, tooltip } },
    { data: { values: rows.filter((r) => r.place > 0) }, mark: { type: 'line', interpolate: 'step-after', color: FRONT_COLOUR, strokeWidth: 2 }, encoding: { x, y, order: { field: 'place', type: 'quantitative' } } },
    { data: { values: rows.filter((r) => r.place > 0) }, mark: { type: 'point', filled: true, size: 60, color: FRONT_COLOUR, opacity: 1 }, encoding: { x, y, tooltip } },
    { data: { values: rows.filter((r) => r.place > 0) }, mark: { type: 'text', dy: -11, fontSize: 10, color: INK }, encoding: { x, y, text: { field: 'place', type: 'quantitative' } } },
    { data: { values: rows.filter((r) => r.rank === 1) }, mark: WINNER_MARK, encoding: { x, y, tooltip } },
  ];
  const what = against === 'weights' ? 'size (weights and biases)' : 'measured time per row';
  return titledChart('front', `What a smaller network costs: ${metric} against ${what}`, [
    `Each point is a finished configuration within the limits. Orange, numbered by place: the front, the configurations that no other beats on both ${metric} and ${against === 'weights' ? 'size' : 'time'}`,
    `(export --front <place> exports one). Star: the winner of the ranking.${references.band ? ' Shaded: within one standard error of the winner\'s score.' : ''}${against === 'time' ? ' Times are measured on the coordinating machine and vary from run to run.' : ''}`,
  ], { width: 560, height: 300, layer: layers });
}
