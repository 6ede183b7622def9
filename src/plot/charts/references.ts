import type { StudyDocument } from '../../store/types.js';
import { formatNumber } from '../../report/format.js';
import { NOISE_BAND, REFERENCE } from '../palette.js';
import { bestTrial } from '../winner.js';
import { studyRepeats } from '../../report/repeat-text.js';
import { baselineScore } from '../../core/baselines.js';
import type { ChartLayer } from './chart.js';

/** A score to beat that no trial produced (say, a constant model's), drawn as a dashed rule on the score axis. */
export interface Baseline {
  /** A few words, drawn beside the rule: "always the majority class". */
  label: string;
  score: number;
}

/** The winner's score and one standard error of it, drawn as a band: scores inside it are within noise of the winner. */
export interface NoiseBand {
  score: number;
  standardError: number;
  /** Where the standard error comes from, in a few words: "5 folds", "3 repeat runs". */
  from: string;
}

/** What the score charts draw besides the trials, when the study (or the caller) has it. */
export interface ChartReferences {
  baselines?: readonly Baseline[];
  band?: NoiseBand;
}

/**
 * The winner's band from the study itself: its mean and standard error over the repeat runs (the search
 * run and the further seeds) when the study has them, else the standard error of its score over folds,
 * when the study used folds. Undefined otherwise.
 */
export function winnerBand(study: StudyDocument): NoiseBand | undefined {
  const winner = bestTrial(study);
  const repeats = study.repeats ? studyRepeats(study) : undefined;
  const repeated = repeats && winner && repeats.winnerId === winner.id ? repeats.figures[0] : undefined;
  if (repeated?.standardError !== undefined) return { score: repeated.mean, standardError: repeated.standardError, from: `${repeated.count} runs` };
  const error = winner?.scoreStandardError;
  if (!winner || winner.score === null || error === undefined || !Number.isFinite(error)) return undefined;
  const folds = study.definition.data.folds;
  return { score: winner.score, standardError: error, from: folds ? `${folds} folds` : 'folds' };
}

/** The study's own baselines on the goal's metric (constant and linear), as the charts draw them. */
export function studyBaselineRules(study: StudyDocument): Baseline[] {
  const rules: Baseline[] = [];
  const constant = baselineScore(study.baselines?.constant, study.goal.metric);
  const linear = baselineScore(study.baselines?.linear, study.goal.metric);
  if (constant !== undefined) rules.push({ label: 'constant', score: constant });
  if (linear !== undefined) rules.push({ label: 'linear', score: linear });
  return rules;
}

/** The references of a study: its own band and baselines unless the caller gives them. */
export function studyReferences(study: StudyDocument, given: ChartReferences = {}): ChartReferences {
  const band = given.band ?? winnerBand(study);
  const baselines = given.baselines && given.baselines.length > 0 ? given.baselines : studyBaselineRules(study);
  return { ...(baselines.length > 0 ? { baselines } : {}), ...(band ? { band } : {}) };
}

/** Scores a chart's axis must reach so the references are drawn (the band's edges, each baseline). */
export function referenceScores(references: ChartReferences): number[] {
  const band = references.band;
  return [...(band ? [band.score - band.standardError, band.score + band.standardError] : []), ...(references.baselines ?? []).map((b) => b.score)];
}

/** An axis range widened, when it is set, so that every reference score lies on it. */
export function withReferences(domain: [number, number] | undefined, references: ChartReferences): [number, number] | undefined {
  if (!domain) return undefined;
  const scores = referenceScores(references);
  return [Math.min(domain[0], ...scores), Math.max(domain[1], ...scores)];
}

/** A y encoding as the score layers use it: a field name, plus whatever title and scale they share. */
interface ScoreAxis {
  field: string;
  type: 'quantitative';
  [key: string]: unknown;
}

/**
 * Vega-Lite layers for the references on a chart of `width` pixels whose score axis is `y`: the
 * band across the whole width (under everything else, so put these layers first) and each
 * baseline as a dashed rule labelled at the right end.
 */
export function referenceLayers(references: ChartReferences, y: ScoreAxis, width: number): ChartLayer[] {
  const layers: ChartLayer[] = [];
  const band = references.band;
  if (band) {
    const row = { low: band.score - band.standardError, high: band.score + band.standardError, label: `winner ${formatNumber(band.score)} ± ${formatNumber(band.standardError)} (one standard error over ${band.from})` };
    layers.push({
      data: { values: [row] },
      mark: { type: 'rect', color: NOISE_BAND, opacity: 0.7 },
      encoding: { y: { ...y, field: 'low' }, y2: { field: 'high' }, tooltip: [{ field: 'label', type: 'nominal', title: 'within noise of the winner' }] },
    });
  }
  const baselines = (references.baselines ?? []).map((b) => ({ score: b.score, label: `${b.label}: ${formatNumber(b.score)}` }));
  if (baselines.length > 0) {
    layers.push(
      { data: { values: baselines }, mark: { type: 'rule', color: REFERENCE, strokeDash: [2, 3], strokeWidth: 1.5 }, encoding: { y: { ...y, field: 'score' }, tooltip: [{ field: 'label', type: 'nominal', title: 'baseline' }] } },
      {
        data: { values: baselines },
        mark: { type: 'text', align: 'right', baseline: 'bottom', dy: -2, fontSize: 10, color: REFERENCE },
        encoding: { x: { value: width - 4 }, y: { ...y, field: 'score' }, text: { field: 'label', type: 'nominal' } },
      },
    );
  }
  return layers;
}
