import type { StudyDocument } from '../../store/types.js';
import { leaderSteps, plannedEpochs } from '../analysis/budget.js';
import { robustDomain } from '../data.js';
import { goalLabel } from '../labels.js';
import { BUDGET_END, WINNER_MARK, studyColour } from '../palette.js';
import { bestTrial } from '../winner.js';
import { titledChart, type Chart } from './chart.js';

/**
 * The leader's score against the epochs spent, one line per study, with each study's planned
 * budget as a dashed rule and a star where the eventual winner took the lead. Null when no study
 * has a leader yet. The studies share one goal (the caller checks).
 */
export function budgetChart(studies: readonly StudyDocument[]): Chart | null {
  const names = studies.map((s) => s.name);
  const rows = studies.flatMap((study) => {
    const winner = bestTrial(study)?.id;
    const steps = leaderSteps(study);
    const crowned = steps.findIndex((s, i) => s.leaderId === winner && steps.slice(i).every((later) => later.leaderId === winner));
    return steps.map((step, i) => ({ study: study.name, ...step, winner: i === crowned, label: `trial ${step.leaderId}, ${step.leaderEpochs} epochs` }));
  });
  if (rows.length === 0) return null;
  const budgets = studies.flatMap((study) => {
    const epochs = plannedEpochs(study);
    return epochs === undefined ? [] : [{ study: study.name, epochs, label: `planned: ${epochs} epochs${studies.length > 1 ? ` (${study.name})` : ''}` }];
  });
  const goal = studies[0]!.goal;
  const domain = robustDomain(rows.map((r) => r.score));
  const color = { field: 'study', type: 'nominal' as const, title: 'study', scale: { domain: names, range: names.map((_, i) => studyColour(i)) }, legend: studies.length > 1 ? {} : null };
  const x = { field: 'epochsSpent', type: 'quantitative' as const, title: 'epochs trained so far, all trials together', scale: { domainMin: 0 } };
  const y = { field: 'score', type: 'quantitative' as const, title: goalLabel(goal), scale: domain ? { zero: false, domain, clamp: true } : { zero: false } };
  const title = 'The leader against compute spent';
  return titledChart('budget', title, [
    "The line is the ranking's leader after each job ended (more epochs rank first, so the line may step down when a",
    'longer-trained configuration takes the lead). Dashed: the epochs the sampler planned. Star: where the winner took the lead.',
  ], {
    width: 560,
    height: 280,
    layer: [
      {
        data: { values: rows },
        mark: { type: 'line', interpolate: 'step-after', strokeWidth: 2 },
        encoding: { x, y, color },
      },
      {
        data: { values: rows },
        mark: { type: 'point', filled: true, size: 28 },
        encoding: { x, y, color, tooltip: [{ field: 'label', type: 'nominal' }] },
      },
      { data: { values: rows }, transform: [{ filter: 'datum.winner' }], mark: WINNER_MARK, encoding: { x, y } },
      ...(budgets.length > 0
        ? [
            {
              data: { values: budgets },
              mark: { type: 'rule' as const, strokeDash: [5, 4], color: BUDGET_END },
              encoding: { x: { field: 'epochs', type: 'quantitative' as const } },
            },
            {
              data: { values: budgets },
              mark: { type: 'text' as const, align: 'right' as const, baseline: 'top' as const, dx: -4, y: 4, color: BUDGET_END, fontSize: 11 },
              encoding: { x: { field: 'epochs', type: 'quantitative' as const }, text: { field: 'label', type: 'nominal' as const } },
            },
          ]
        : []),
    ],
  });
}
