import type { StudyDocument } from '../../store/types.js';
import { scoreAtEpoch, type StudyImportance } from '../analysis/study-importance.js';
import { metricLabel } from '../labels.js';
import { FADED, GOOD_REGION, INK, WINNER_MARK, studyColour } from '../palette.js';
import { bestTrial } from '../winner.js';
import { titledChart, type Chart } from './chart.js';

/** Hyperparameters drawn in the good-values chart: the most important ones. */
export const GOOD_VALUE_PANELS = 3;
const PANEL_HEIGHT = 170;

/** Grid values as intervals: consecutive good grid points of a continuous hyperparameter join into one band. */
function bands(marginal: readonly { value: string | number }[], good: readonly (string | number)[]): { from: number; to: number }[] {
  const values = marginal.map((m) => Number(m.value));
  const out: { from: number; to: number }[] = [];
  values.forEach((value, i) => {
    if (!good.includes(marginal[i]!.value)) return;
    // Each grid point stands for the cell around it, to halfway to its neighbours.
    const from = i === 0 ? value : (values[i - 1]! + value) / 2;
    const to = i === values.length - 1 ? value : (value + values[i + 1]!) / 2;
    const previous = out.at(-1);
    if (previous && previous.to === from) previous.to = to;
    else out.push({ from, to });
  });
  return out;
}

/**
 * For the most important hyperparameters: each configuration's score (at the epoch the
 * importance compared) against its value, the forest's marginal as a line, the good region shaded
 * and the winner starred. Null without an importance.
 */
export function goodValuesChart(study: StudyDocument, importance: StudyImportance | undefined): Chart | null {
  if (!importance) return null;
  const winner = bestTrial(study)?.id;
  const chosen = importance.parameters.slice(0, GOOD_VALUE_PANELS);
  const metric = metricLabel(study.goal.metric);
  const title = 'Good values of the hyperparameters that matter most';
  const panels = chosen.map((parameter) => {
    const points = study.trials.flatMap((t) => {
      const score = scoreAtEpoch(t, study, importance.epoch);
      return score === undefined ? [] : [{ value: t.configuration[parameter.key] ?? 0, score, winner: t.id === winner, trial: t.id }];
    });
    const continuous = parameter.kind === 'continuous';
    const log = continuous && /log scale/.test(parameter.title);
    const xType = continuous ? ('quantitative' as const) : ('nominal' as const);
    const x = {
      field: 'value',
      type: xType,
      title: parameter.title,
      ...(continuous ? { scale: log ? { type: 'log' as const, nice: false } : { type: 'linear' as const, zero: false, nice: false } } : { sort: parameter.marginal.map((m) => String(m.value)), axis: { labelAngle: 0 } }),
    };
    const y = { field: 'score', type: 'quantitative' as const, title: `${metric} at epoch ${importance.epoch}`, scale: { zero: false } };
    const asText = (rows: { value: string | number }[]) => (continuous ? rows : rows.map((r) => ({ ...r, value: String(r.value) })));
    // The shade spans the panel's height whatever the score's range.
    const shade = {
      data: { values: continuous ? bands(parameter.marginal, parameter.good) : parameter.good.map((value) => ({ value: String(value) })) },
      mark: { type: 'rect' as const, color: GOOD_REGION },
      encoding: { ...(continuous ? { x: { field: 'from', type: 'quantitative' as const }, x2: { field: 'to' } } : { x }), y: { value: 0 }, y2: { value: PANEL_HEIGHT } },
    };
    return {
      title: { text: `${parameter.title} (${Math.round(parameter.share * 100)}% of the variance)`, fontSize: 12 },
      width: 230,
      height: PANEL_HEIGHT,
      layer: [
        shade,
        { data: { values: asText(points.filter((p) => !p.winner)) }, mark: { type: 'point' as const, filled: true, size: 22, color: FADED, opacity: 0.9 }, encoding: { x, y } },
        { data: { values: asText(parameter.marginal) }, mark: { type: continuous ? ('line' as const) : ('tick' as const), color: studyColour(0), strokeWidth: 2, thickness: 2 }, encoding: { x, y } },
        { data: { values: asText(points.filter((p) => p.winner)) }, mark: WINNER_MARK, encoding: { x, y } },
      ],
    };
  });
  return titledChart('good-values', title, [
    `Grey: each configuration's ${metric} at epoch ${importance.epoch}. Line: the forest's prediction at that value with the other hyperparameters averaged out.`,
    'Shaded: where that prediction is in the better quarter of its range. Star: the winner.',
  ], {
    columns: 3,
    concat: panels,
  });
}
