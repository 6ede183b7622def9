import type { StudyDocument } from '../../store/types.js';
import { rungAgreements, rungStandings } from '../analysis/rung-agreement.js';
import { extent } from '../data.js';
import { isHalving } from '../labels.js';
import { FADED, INK, WINNER_MARK, rungScale } from '../palette.js';
import { bestTrial } from '../winner.js';
import { titledChart, type Chart } from './chart.js';

/** "rho 0.80 (5)", or "too few" when fewer than three configurations were scored at both rungs. */
export function agreementText(rho: number, configurations: number): string {
  return configurations >= 3 && Number.isFinite(rho) ? `rho ${rho.toFixed(2)} (${configurations})` : `${configurations} scored at both`;
}

/**
 * Each configuration's place at every rung it reached (1 is best), joined from rung to rung, one
 * panel per bracket; the winner's path in ink with stars. Between two rungs, Spearman's rho of the
 * promoted configurations' places says how well the earlier rung foretold the later one.
 * Null unless the sampler is a halving one with some configuration past rung 0.
 */
export function rungAgreementChart(study: StudyDocument): Chart | null {
  if (!isHalving(study.definition.sampler.kind)) return null;
  const winner = bestTrial(study)?.id;
  const standings = rungStandings(study).map((s) => ({ ...s, winner: s.trialId === winner, rungLabel: `rung ${s.rung}, ${s.rungEpochs} ep.` }));
  const agreements = rungAgreements(study);
  const brackets = [...new Set(agreements.map((a) => a.bracket))];
  if (brackets.length === 0) return null;
  const title = 'How well each rung foretold the next';
  const rhoRows = agreements.map((a) => ({ bracket: a.bracket, rung: a.fromRung + 0.5, text: agreementText(a.rho, a.configurations) }));
  const top = extent(standings.map((s) => s.rung))[1];
  const panel = (bracket: number) => {
    const placesHere = standings.filter((s) => s.bracket === bracket);
    const most = extent(placesHere.map((s) => s.of))[1];
    const rungs = extent(placesHere.map((s) => s.rung))[1];
    const x = { field: 'rung', type: 'quantitative' as const, title: 'rung', scale: { domain: [-0.25, rungs + 0.25] }, axis: { values: Array.from({ length: rungs + 1 }, (_, r) => r), format: 'd' } };
    const y = { field: 'place', type: 'quantitative' as const, title: 'place at the rung (1 = best)', scale: { reverse: true, domain: [1, most], nice: false }, axis: { tickMinStep: 1, format: 'd' } };
    return {
      title: { text: `bracket ${bracket}`, fontSize: 12 },
      width: Math.max(160, 110 * rungs),
      height: Math.min(320, Math.max(140, 9 * most)),
      layer: [
        {
          data: { values: placesHere.filter((s) => !s.winner) },
          mark: { type: 'line' as const, color: FADED, strokeWidth: 1 },
          encoding: { x, y, detail: { field: 'trialId', type: 'nominal' as const } },
        },
        {
          data: { values: placesHere },
          mark: { type: 'point' as const, filled: true, size: 26, opacity: 0.9 },
          encoding: { x, y, color: { field: 'rung', type: 'ordinal' as const, title: 'rung', scale: rungScale(top), legend: null }, tooltip: [{ field: 'trialId', title: 'trial' }, { field: 'place' }, { field: 'of' }] },
        },
        { data: { values: placesHere.filter((s) => s.winner) }, mark: { type: 'line' as const, color: INK, strokeWidth: 2 }, encoding: { x, y } },
        { data: { values: placesHere.filter((s) => s.winner) }, mark: WINNER_MARK, encoding: { x, y } },
        {
          data: { values: rhoRows.filter((r) => r.bracket === bracket) },
          mark: { type: 'text' as const, baseline: 'bottom' as const, dy: -4, fontSize: 11, color: INK },
          encoding: { x, y: { datum: 1, type: 'quantitative' as const, scale: y.scale }, text: { field: 'text', type: 'nominal' as const } },
        },
      ],
    };
  };
  return titledChart('rung-agreement', title, [
    "Each line is one configuration's place among those scored at a rung; between rungs, Spearman's rho of the promoted",
    "configurations' places (1: the earlier rung ordered them as the later did) and how many there were. Star: the winner.",
  ], {
    columns: 2,
    concat: brackets.map(panel),
  }, { concat: { spacing: 28 } });
}
