import type { StudyDocument } from '../../store/types.js';
import { rankTrials } from '../../core/ranking.js';
import { FOREST_ROWS } from '../analysis/importance.js';
import { FEWEST_FOR_IMPORTANCE, type ParameterImportance, type StudyImportance } from '../analysis/study-importance.js';
import { extent } from '../data.js';
import { metricLabel } from '../labels.js';
import { GOOD_REGION, INK, WINNER_SHAPE, placeColour } from '../palette.js';
import { titledChart, type Chart, type ChartBody } from './chart.js';

/** Height of one hyperparameter's row, in pixels. */
const ROW_HEIGHT = 38;
const SHARE_WIDTH = 330;
/** Room for the hyperparameter's name at the left of its row. */
const NAME_WIDTH = 140;
const VALUE_WIDTH = 400;
/** Places of the ranking marked on every row. */
const MARKED_PLACES = 5;

/** Grid values as intervals: consecutive good grid points of a continuous hyperparameter join into one band. */
export function goodBands(marginal: readonly { value: string | number }[], good: readonly (string | number)[]): { from: number; to: number }[] {
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

interface Marked {
  trialId: number;
  place: number;
}

/** The row's left part: the hyperparameter's name, and its share of the variance as a bar. */
function shareView(parameter: ParameterImportance): object {
  const row = { parameter: parameter.shortTitle, share: parameter.share, percent: `${Math.round(parameter.share * 100)}%` };
  return {
    width: SHARE_WIDTH,
    height: ROW_HEIGHT,
    view: { stroke: null },
    data: { values: [row] },
    layer: [
      { mark: { type: 'text', align: 'left', baseline: 'middle', x: 0, y: ROW_HEIGHT / 2, fontSize: 11, color: INK, limit: 200 }, encoding: { text: { field: 'parameter' } } },
      {
        mark: { type: 'rect', color: INK, y: ROW_HEIGHT / 2 - 7, y2: ROW_HEIGHT / 2 + 7 },
        encoding: { x: { field: 'share', type: 'quantitative', title: null, scale: { domain: [0, 1], range: [NAME_WIDTH, SHARE_WIDTH - 36] }, axis: null }, x2: { datum: 0 }, tooltip: [{ field: 'parameter', title: 'hyperparameter' }, { field: 'percent', title: 'share of the variance explained alone' }] },
      },
      { mark: { type: 'text', align: 'left', baseline: 'middle', dx: 4, y: ROW_HEIGHT / 2, fontSize: 11, color: INK }, encoding: { x: { field: 'share', type: 'quantitative' }, text: { field: 'percent' } } },
    ],
  };
}

/** The row's right part: the forest's predicted score across the hyperparameter's values, the good region shaded, the top five marked. */
function valueView(study: StudyDocument, parameter: ParameterImportance, marked: readonly Marked[], scoreDomain: [number, number], scoreTitle: string): object {
  const continuous = parameter.kind === 'continuous';
  const log = continuous && /log scale/.test(parameter.title);
  const asValue = (value: string | number): string | number => (continuous ? Number(value) : String(value));
  const x = {
    field: 'value',
    type: continuous ? 'quantitative' : 'nominal',
    title: parameter.title,
    axis: { titleFontSize: 11, titleFontWeight: 'normal', labelAngle: 0, tickCount: 5 },
    ...(continuous ? { scale: log ? { type: 'log', nice: false } : { type: 'linear', zero: false, nice: false } } : { sort: parameter.marginal.map((m) => String(m.value)) }),
  };
  const y = { field: 'score', type: 'quantitative', title: null, scale: { domain: scoreDomain, nice: false }, axis: { tickCount: 2, format: '.3' } };
  const byId = new Map(study.trials.map((t) => [t.id, t]));
  const points = marked.map(({ trialId, place }) => ({ value: asValue(byId.get(trialId)!.configuration[parameter.key] ?? 0), place, label: `#${place} trial ${trialId}`, colour: placeColour(place) }));
  const shade = continuous
    ? { data: { values: goodBands(parameter.marginal, parameter.good) }, mark: { type: 'rect', color: GOOD_REGION }, encoding: { x: { field: 'from', type: 'quantitative' }, x2: { field: 'to' } } }
    : { data: { values: parameter.good.map((value) => ({ value: String(value) })) }, mark: { type: 'rect', color: GOOD_REGION }, encoding: { x } };
  const marginal = parameter.marginal.map((m) => ({ value: asValue(m.value), score: m.score }));
  return {
    width: VALUE_WIDTH,
    height: ROW_HEIGHT,
    layer: [
      { ...shade, encoding: { ...shade.encoding, y: { value: 0 }, y2: { value: ROW_HEIGHT } } },
      {
        data: { values: marginal },
        mark: continuous ? { type: 'line', color: INK, strokeWidth: 1.5 } : { type: 'tick', color: INK, thickness: 2 },
        encoding: { x, y, tooltip: [{ field: 'value', title: parameter.shortTitle, ...(continuous ? { format: '.3' } : {}) }, { field: 'score', title: scoreTitle, format: '.4' }] },
      },
      {
        data: { values: points.filter((p) => p.place !== 1) },
        mark: { type: 'point', shape: 'triangle-down', filled: true, size: 46, opacity: 1 },
        encoding: { x, y: { value: 4 }, color: { field: 'colour', type: 'nominal', scale: null }, tooltip: [{ field: 'label', title: 'trial' }, { field: 'value', title: parameter.shortTitle }] },
      },
      {
        data: { values: points.filter((p) => p.place === 1) },
        mark: { type: 'point', shape: WINNER_SHAPE, filled: true, color: INK, stroke: 'white', strokeWidth: 0.8, size: 120, opacity: 1 },
        encoding: { x, y: { value: 5 }, tooltip: [{ field: 'label', title: 'the winner' }, { field: 'value', title: parameter.shortTitle }] },
      },
    ],
  };
}

/**
 * Which hyperparameters matter, and which values are good, in one chart: a row per hyperparameter,
 * largest share first; on the left its share of the score's variance (functional ANOVA main
 * effect) as a bar, on the right the forest's predicted score across its values with the others
 * averaged out, every row on the same score scale (so a hyperparameter that hardly matters draws a
 * flat line), the good region shaded, and where the top five of the ranking sit marked in their
 * colours (the winner a star). Null without an importance.
 */
export function hyperparametersChart(study: StudyDocument, importance: StudyImportance | undefined): Chart | null {
  if (!importance || importance.parameters.length === 0) return null;
  const marked = rankTrials(study.trials, study.goal)
    .slice(0, MARKED_PLACES)
    .map(({ rank, trial }) => ({ trialId: trial.id, place: rank }));
  const [low, high] = extent(importance.parameters.flatMap((p) => p.marginal.map((m) => m.score)));
  const pad = (high - low) * 0.08 || Math.abs(high) * 0.01 || 0.01;
  const scoreDomain: [number, number] = [low - pad, high + pad];
  const scoreTitle = `predicted ${metricLabel(study.goal.metric)} at epoch ${importance.epoch}`;
  const fitted = importance.configurations > FOREST_ROWS ? `a seeded sample of ${FOREST_ROWS} of the ${importance.configurations}` : String(importance.configurations);
  const rows = importance.parameters.map((parameter) => ({ hconcat: [shareView(parameter), valueView(study, parameter, marked, scoreDomain, scoreTitle)], spacing: 8 }));
  return titledChart('hyperparameters', 'Which hyperparameters matter, and where their good values lie', [
    `Bar: the share of the variance of the score at epoch ${importance.epoch} that the hyperparameter explains alone (a random forest fitted to ${fitted}`,
    `configurations, decomposed by functional ANOVA after Hutter, Hoos and Leyton-Brown, 2014; the rest is interactions; at least ${FEWEST_FOR_IMPORTANCE} configurations).`,
    `Line: the forest's predicted ${metricLabel(study.goal.metric)} across the hyperparameter's values with the others averaged out, on one score scale for every row,`,
    'so a flat line means it hardly matters. Shaded: the better quarter of that line\'s range. Triangles: where places 2 to 5 sit; star: the winner.',
  ], { vconcat: rows, spacing: 6 } as ChartBody, { concat: { spacing: 6 } });
}
