import type { StudyDocument } from '../../store/types.js';
import { rankTrials } from '../../core/ranking.js';
import { rungAgreements, rungStandings, type RungStanding } from '../analysis/rung-agreement.js';
import { extent } from '../data.js';
import { isHalving } from '../labels.js';
import { FADED, INK, WINNER_MARK, placeColour } from '../palette.js';
import { titledChart, type Chart } from './chart.js';

/**
 * Spearman's rho in words, for readers who have not met it: how far the earlier rung put the
 * configurations it promoted in the order the later rung found. The cut points are
 * Common practice (no source): the usual verbal bands for a correlation.
 */
export function agreementWords(rho: number): string {
  if (rho >= 0.8) return 'nearly the same order';
  if (rho >= 0.5) return 'much the same order';
  if (rho >= 0.2) return 'loosely the same order';
  if (rho > -0.2) return 'no real relation';
  return 'roughly the reverse order';
}

/** "0.80: nearly the same order (5 configurations)", or why there is no figure (fewer than three went on). */
export function agreementText(rho: number, configurations: number): string {
  if (configurations >= 3 && Number.isFinite(rho)) return `${rho.toFixed(2)}: ${agreementWords(rho)} (${configurations} configurations)`;
  return `${configurations} configuration${configurations === 1 ? '' : 's'} went on: too few to say`;
}

/** Axis labels of a bracket's rungs, two lines each: "rung 1, 9 epochs" and how many configurations it scored. */
function rungLabels(standings: readonly RungStanding[]): Record<number, string[]> {
  const labels: Record<number, string[]> = {};
  for (const s of standings) labels[s.rung] = [`rung ${s.rung}, ${s.rungEpochs} epoch${s.rungEpochs === 1 ? '' : 's'}`, `${s.of} scored`];
  return labels;
}

/** Paths drawn per bracket at most: those that went furthest and placed best there; the rest are counted, not drawn. */
export const DRAWN_PATHS = 120;

/** The configurations of a bracket whose paths are drawn: every top-five one, then the furthest and best placed. */
function drawnTrials(standings: readonly RungStanding[], places: ReadonlyMap<number, number>): Set<number> {
  const last = new Map<number, RungStanding>();
  for (const s of standings) if ((last.get(s.trialId)?.rung ?? -1) < s.rung) last.set(s.trialId, s);
  const order = [...last.values()].sort((a, b) => b.rung - a.rung || a.place - b.place).map((s) => s.trialId);
  return new Set([...order.filter((id) => places.has(id)), ...order.slice(0, DRAWN_PATHS)]);
}

/**
 * Did the early rungs judge well: each configuration's place at every rung it reached (1 is
 * best), joined from rung to rung, one panel per bracket; the top five of the ranking in their
 * colours (the winner in ink with a star). Between two rungs, the rank correlation of the promoted
 * configurations' places in numbers and words. A bracket of more than {@link DRAWN_PATHS}
 * configurations draws the paths of those that went furthest (and the top five); every rung says
 * how many it scored, and places run on a log axis from 40 on. Null unless the sampler is a halving
 * one with some configuration past rung 0.
 */
export function rungAgreementChart(study: StudyDocument): Chart | null {
  if (!isHalving(study.definition.sampler.kind)) return null;
  const agreements = rungAgreements(study);
  const brackets = [...new Set(agreements.map((a) => a.bracket))];
  if (brackets.length === 0) return null;
  const places = new Map(rankTrials(study.trials, study.goal).slice(0, 5).map(({ rank, trial }) => [trial.id, rank]));
  const all = rungStandings(study);
  const panel = (bracket: number) => {
    const here = all.filter((s) => s.bracket === bracket);
    const drawn = drawnTrials(here, places);
    const rows = here.filter((s) => drawn.has(s.trialId)).map((s) => ({ ...s, top: places.get(s.trialId) ?? 0, colour: placeColour(places.get(s.trialId) ?? 99), label: `trial ${s.trialId}: place ${s.place} of ${s.of} at rung ${s.rung} (${s.rungEpochs} epochs)` }));
    const most = extent(here.map((s) => s.of))[1];
    const rungs = extent(here.map((s) => s.rung))[1];
    const x = { field: 'rung', type: 'quantitative' as const, title: null, scale: { domain: [-0.3, rungs + 0.3] }, axis: { values: Array.from({ length: rungs + 1 }, (_, r) => r), labelOverlap: false, labelExpr: `${JSON.stringify(rungLabels(here))}[datum.value]` } };
    const y = { field: 'place', type: 'quantitative' as const, title: 'place at the rung (1 = best)', scale: most > 40 ? { type: 'log' as const, reverse: true, domain: [1, most], nice: false } : { reverse: true, domain: [1, most], nice: false }, axis: { tickMinStep: 1, format: 'd' } };
    const rho = agreements.filter((a) => a.bracket === bracket).map((a) => ({ rung: a.fromRung + 0.5, text: Number.isFinite(a.rho) && a.configurations >= 3 ? [`agreement ${a.rho.toFixed(2)}`, agreementWords(a.rho)] : ['too few', 'to say'], full: agreementText(a.rho, a.configurations) }));
    return {
      title: { text: `bracket ${bracket}${drawn.size < new Set(here.map((s) => s.trialId)).size ? ` (paths of the ${drawn.size} that went furthest)` : ''}`, fontSize: 12 },
      width: Math.max(190, 160 * rungs),
      height: Math.min(320, Math.max(150, 9 * Math.min(most, 40))),
      layer: [
        { data: { values: rows.filter((r) => r.top === 0) }, mark: { type: 'line' as const, color: FADED, strokeWidth: 1 }, encoding: { x, y, detail: { field: 'trialId', type: 'nominal' as const } } },
        { data: { values: rows.filter((r) => r.top === 0) }, mark: { type: 'point' as const, filled: true, size: 18, color: FADED, opacity: 1 }, encoding: { x, y, tooltip: [{ field: 'label', type: 'nominal' as const, title: 'configuration' }] } },
        { data: { values: rows.filter((r) => r.top > 0) }, mark: { type: 'line' as const, strokeWidth: 2 }, encoding: { x, y, detail: { field: 'trialId', type: 'nominal' as const }, color: { field: 'colour', type: 'nominal' as const, scale: null } } },
        { data: { values: rows.filter((r) => r.top > 1) }, mark: { type: 'point' as const, filled: true, size: 34, opacity: 1 }, encoding: { x, y, color: { field: 'colour', type: 'nominal' as const, scale: null }, tooltip: [{ field: 'label', type: 'nominal' as const, title: `place in the ranking` }] } },
        { data: { values: rows.filter((r) => r.top === 1) }, mark: WINNER_MARK, encoding: { x, y, tooltip: [{ field: 'label', type: 'nominal' as const, title: 'the winner' }] } },
        { data: { values: rho }, mark: { type: 'text' as const, baseline: 'bottom' as const, dy: -19, fontSize: 10, color: INK, lineBreak: '\n' }, encoding: { x, y: { datum: 1, type: 'quantitative' as const, scale: y.scale }, text: { field: 'text', type: 'nominal' as const }, tooltip: [{ field: 'full', type: 'nominal' as const, title: 'rank agreement' }] } },
      ],
    };
  };
  return titledChart('rung-agreement', 'Did the early rungs judge well? Each configuration\'s place at each rung', [
    'A halving sampler looks at every configuration briefly (rung 0) and lets only the best go on training. Each line is one configuration\'s place',
    'among those scored at a rung. Agreement, between two rungs: did the short look put the configurations that went on in the order the longer look',
    'found? 1: the same order; 0: no relation; below 0: reversed (Spearman\'s rank correlation). Coloured: the top five of the ranking; star: the winner.',
  ], {
    columns: 2,
    concat: brackets.map(panel),
  }, { concat: { spacing: 36 } });
}
