import type { StudyDocument } from '../../store/types.js';
import { computeTimeline, leaderSteps, plannedEpochs } from '../analysis/budget.js';
import { extent, robustDomain } from '../data.js';
import { goalLabel, isHalving } from '../labels.js';
import { BUDGET_END, INK, WINNER_MARK, rungScale, studyColour } from '../palette.js';
import { bestTrial } from '../winner.js';
import { titledChart, type Chart, type ChartBody, type ChartLayer } from './chart.js';
import { referenceLayers, withReferences, type ChartReferences } from './references.js';

const WIDTH = 560;
const LEADER_HEIGHT = 250;

/** The leader after each job, per study, with a star where the eventual winner took the lead for good. */
function leaderRows(studies: readonly StudyDocument[]) {
  return studies.flatMap((study) => {
    const winner = bestTrial(study)?.id;
    const steps = leaderSteps(study);
    const crowned = steps.findIndex((s, i) => s.leaderId === winner && steps.slice(i).every((later) => later.leaderId === winner));
    return steps.map((step, i) => ({ study: study.name, ...step, winner: i === crowned, label: `trial ${step.leaderId}, ${step.leaderEpochs} epochs` }));
  });
}

/** The planned budget as a dashed rule with its label, for the studies whose plan can be read. */
function plannedLayers(studies: readonly StudyDocument[]): ChartLayer[] {
  const budgets = studies.flatMap((study) => {
    const epochs = plannedEpochs(study);
    return epochs === undefined ? [] : [{ study: study.name, epochs, label: `planned: ${epochs} epochs${studies.length > 1 ? ` (${study.name})` : ''}` }];
  });
  if (budgets.length === 0) return [];
  const x = { field: 'epochs', type: 'quantitative' as const };
  return [
    { data: { values: budgets }, mark: { type: 'rule', strokeDash: [5, 4], color: BUDGET_END }, encoding: { x } },
    { data: { values: budgets }, mark: { type: 'text', align: 'right', baseline: 'bottom', dx: -4, y: LEADER_HEIGHT - 4, color: BUDGET_END, fontSize: 11 }, encoding: { x, text: { field: 'label', type: 'nominal' } } },
  ];
}

/** The strip under the leader: which rungs each stretch of compute went to, on the same epochs axis. */
function computeStrip(study: StudyDocument, x: object): object | null {
  if (!isHalving(study.definition.sampler.kind)) return null;
  // Stacked here: Vega-Lite stacks bars, not rectangles with their own x2. Stretches come in rung order.
  let below = 0;
  let stretch = -1;
  const rows = computeTimeline(study).map((s) => {
    if (s.from !== stretch) [below, stretch] = [0, s.from];
    below += s.share;
    return { ...s, low: below - s.share, high: below, detail: `epochs ${Math.round(s.from)} to ${Math.round(s.to)}: ${Math.round(s.share * 100)}% at rung ${s.rung}` };
  });
  if (rows.length === 0) return null;
  const top = extent(rows.map((r) => r.rung))[1];
  return {
    width: WIDTH,
    height: 54,
    title: { text: 'Where those epochs went: the rung each stretch of compute trained', fontSize: 11, fontWeight: 'normal' as const, color: INK },
    data: { values: rows },
    mark: { type: 'rect' },
    encoding: {
      x: { ...x, field: 'from', title: null },
      x2: { field: 'to' },
      y: { field: 'low', type: 'quantitative', title: 'share', axis: { format: '.0%', values: [0, 1] }, scale: { domain: [0, 1] } },
      y2: { field: 'high' },
      color: { field: 'rung', type: 'ordinal', title: 'rung', scale: rungScale(top), legend: { orient: 'bottom', direction: 'horizontal' } },
      tooltip: [{ field: 'detail', type: 'nominal', title: 'compute' }],
    },
  };
}

/**
 * Was the budget well spent: the ranking's leader against the epochs spent, one line per study,
 * the planned budget dashed and a star where the winner took the lead; for one halving study a strip
 * below, on the same epochs axis, of the rungs the compute went to. The winner's noise band and
 * baselines are drawn when `references` has them (one study only). Null when no study has a leader.
 */
export function budgetChart(studies: readonly StudyDocument[], references: ChartReferences = {}): Chart | null {
  const rows = leaderRows(studies);
  if (rows.length === 0) return null;
  const names = studies.map((s) => s.name);
  const one = studies.length === 1;
  const refs = one ? references : {};
  const domain = withReferences(robustDomain(rows.map((r) => r.score)), refs);
  const color = { field: 'study', type: 'nominal' as const, title: 'study', scale: { domain: names, range: names.map((_, i) => (one ? INK : studyColour(i))) }, legend: one ? null : {} };
  const x = { field: 'epochsSpent', type: 'quantitative' as const, title: 'epochs trained so far, all trials together', scale: { domainMin: 0 } };
  const y = { field: 'score', type: 'quantitative' as const, title: goalLabel(studies[0]!.goal), scale: domain ? { zero: false, domain, clamp: true } : { zero: false } };
  const leader = {
    width: WIDTH,
    height: LEADER_HEIGHT,
    layer: [
      ...referenceLayers(refs, y, WIDTH),
      { data: { values: rows }, mark: { type: 'line', interpolate: 'step-after', strokeWidth: 2 }, encoding: { x, y, color } },
      { data: { values: rows }, mark: { type: 'point', filled: true, size: 28 }, encoding: { x, y, color, tooltip: [{ field: 'label', type: 'nominal', title: 'leader' }, { field: 'score', type: 'quantitative', title: 'score', format: '.4' }, { field: 'epochsSpent', type: 'quantitative', title: 'epochs spent' }] } },
      { data: { values: rows }, transform: [{ filter: 'datum.winner' }], mark: WINNER_MARK, encoding: { x, y } },
      ...plannedLayers(studies),
    ],
  };
  const strip = one ? computeStrip(studies[0]!, x) : null;
  const subtitle = [
    "The line is the ranking's leader after each job ended (more epochs rank first, so it may step down when a longer-trained",
    'configuration takes the lead). Dashed: the epochs the sampler planned. Star: where the winner took the lead for good.',
    ...(refs.band ? ['Yellow band: within one standard error of the winner; a leader inside it was as good as the winner within noise.'] : []),
    ...(refs.baselines?.length ? ['Dotted: baselines a tuned network should beat.'] : []),
  ];
  return titledChart('budget', 'The leader against compute spent, and where the compute went', subtitle, (strip ? { vconcat: [leader, strip], resolve: { scale: { x: 'shared', color: 'independent' } } } : leader) as ChartBody, strip ? { concat: { spacing: 10 } } : {});
}
