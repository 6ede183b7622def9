import type { StudyDocument } from '../../store/types.js';
import { FEWEST_FOR_IMPORTANCE, type StudyImportance } from '../analysis/study-importance.js';
import { studyColour } from '../palette.js';
import { titledChart, type Chart } from './chart.js';

/**
 * Each hyperparameter's share of the score's variance (main effects of a random forest's
 * functional ANOVA), one bar per hyperparameter and study, largest first. Null when no study has an
 * importance (too few scored configurations).
 */
export function importanceChart(studies: readonly StudyDocument[], importances: readonly (StudyImportance | undefined)[]): Chart | null {
  const names = studies.map((s) => s.name);
  const rows = studies.flatMap((study, i) =>
    (importances[i]?.parameters ?? []).map((p) => ({ study: study.name, parameter: p.shortTitle, share: p.share, percent: `${(p.share * 100).toFixed(0)}%` })),
  );
  if (rows.length === 0) return null;
  const order = [...new Set(rows.map((r) => r.parameter))];
  const epochs = [...new Set(importances.flatMap((imp) => (imp ? [imp.epoch] : [])))];
  const several = studies.length > 1;
  const title = 'Which hyperparameters matter';
  return titledChart('importance', title, [
    `Share of the variance of the score at epoch ${epochs.join(' / ')} that each hyperparameter explains alone (functional ANOVA main effects`,
    `of a random forest fitted to the configurations; Hutter, Hoos and Leyton-Brown, 2014). The rest is interactions. At least ${FEWEST_FOR_IMPORTANCE} configurations.`,
  ], {
    width: 460,
    height: { step: several ? 14 : 22 },
    data: { values: rows },
    encoding: {
      y: { field: 'parameter', type: 'nominal', title: null, sort: order, axis: { labelLimit: 220 } },
      x: { field: 'share', type: 'quantitative', title: 'share of the variance explained alone', axis: { format: '.0%' }, scale: { domain: [0, 1] } },
      ...(several ? { yOffset: { field: 'study', type: 'nominal' as const, sort: names } } : {}),
    },
    layer: [
      {
        mark: { type: 'bar', height: { band: several ? 0.9 : 0.7 } },
        encoding: { color: { field: 'study', type: 'nominal', title: 'study', scale: { domain: names, range: names.map((_, i) => studyColour(i)) }, legend: several ? {} : null } },
      },
      { mark: { type: 'text', align: 'left', dx: 4, fontSize: 10 }, encoding: { text: { field: 'percent', type: 'nominal' } } },
    ],
  });
}
