/**
 * The repeat runs' figures of a study (`core/repeat-figures.ts`) read from its study file, and in words:
 * each repeated configuration's mean ± standard error, which cannot be told apart from the winner, and
 * the one-standard-error pick. Used by `ranking`, `run`, `resume`, the report, `compare` and `export`.
 */
import { repeatCandidates, repeatSummary, type RepeatFigure, type RepeatSummary } from '../core/repeat-figures.js';
import type { RepeatSettings } from '../core/repeats.js';
import type { StudyDocument } from '../store/types.js';
import { formatNumber, textTable } from './format.js';

type RepeatDoc = Pick<StudyDocument, 'trials' | 'goal' | 'recipe' | 'repeats' | 'definition'>;

/** The study's repeat summary: from its repeat runs, or with folds from the fold scores; undefined when it has neither. */
export function studyRepeats(doc: RepeatDoc): RepeatSummary | undefined {
  const sides = { inputs: doc.recipe.inputCount, outputs: doc.recipe.task === 'multiclass' ? (doc.recipe.classes?.length ?? 1) : 1 };
  if (doc.repeats) return repeatSummary(doc.trials, doc.goal, sides, { record: doc.repeats });
  const settings = (doc.definition as { repeats?: RepeatSettings }).repeats;
  const folds = doc.definition.data.folds;
  if (!settings || settings.top === 0 || folds === undefined) return undefined;
  const trialIds = repeatCandidates(doc.trials, doc.goal, settings.top).map((t) => t.id);
  return repeatSummary(doc.trials, doc.goal, sides, { folds, trialIds });
}

/** "0.912 ± 0.004" (no ± with one score). */
export function meanText(figure: Pick<RepeatFigure, 'mean' | 'standardError'>): string {
  return figure.standardError === undefined ? formatNumber(figure.mean) : `${formatNumber(figure.mean)} ± ${formatNumber(figure.standardError)}`;
}

function againstWinner(figure: RepeatFigure, summary: RepeatSummary): string {
  if (figure.trialId === summary.winnerId) return 'winner';
  if (!figure.difference) return summary.source === 'folds' ? '-' : 'too few runs';
  const { mean, low, high } = figure.difference;
  const interval = `${formatNumber(mean)} [${formatNumber(low)}, ${formatNumber(high)}]`;
  return figure.indistinguishable ? `cannot be told apart: ${interval}` : `worse: ${interval}`;
}

/** The pick in one line, with why. */
export function pickText(summary: RepeatSummary, metric: string): string {
  const pick = summary.figures.find((f) => f.trialId === summary.pickId)!;
  const best = summary.figures.find((f) => f.trialId === summary.bestId)!;
  return `one-standard-error pick: trial ${pick.trialId} (${pick.weights} weights, ${metric} ${meanText(pick)}), the fewest weights among those whose mean reaches ${formatNumber(summary.line)}, one standard error from the best mean (trial ${best.trialId}, ${meanText(best)}) (Hastie, Tibshirani and Friedman 2009, 7.10)`;
}

/** The repeat block under the ranking table, or the line saying there is none. */
export function repeatText(doc: RepeatDoc): string {
  const summary = studyRepeats(doc);
  if (!summary) return 'no repeat runs were recorded (a study from before them, or one with repeats.top 0): the scores above come from one seed each';
  const metric = doc.goal.metric;
  const what =
    summary.source === 'seeds'
      ? `repeat runs: each configuration's search run and ${doc.repeats!.seeds} further seed${doc.repeats!.seeds === 1 ? '' : 's'} on the same split; difference to the winner over the same runs with its 95% paired t interval`
      : `fold scores: each configuration's mean over ${doc.definition.data.folds} folds; no paired interval (the fold scores are not kept one by one)`;
  const rows = summary.figures.map((f) => [String(f.trialId), String(f.count), meanText(f), String(f.weights), againstWinner(f, summary)]);
  const table = textTable(['trial', 'runs', `${metric} mean ± se`, 'weights', 'against the winner'], rows);
  return `${what}\n${table}\n${pickText(summary, metric)}`;
}

/** The repeat figures in one sentence: the winner's mean ± standard error, the runners-up it cannot be told from, the pick. */
export function repeatSentence(doc: RepeatDoc): string {
  const summary = studyRepeats(doc);
  if (!summary) return 'no repeat runs';
  const winner = summary.figures[0]!;
  const tied = summary.figures.slice(1).filter((f) => f.indistinguishable).map((f) => f.trialId);
  const over = summary.source === 'seeds' ? `${winner.count} runs` : `${winner.count} folds`;
  const apart = summary.source === 'folds' ? '' : tied.length > 0 ? `; cannot be told apart from it: trial${tied.length > 1 ? 's' : ''} ${tied.join(', ')}` : '; every runner-up repeated is worse';
  const pick = summary.figures.find((f) => f.trialId === summary.pickId)!;
  return `trial ${winner.trialId}: ${doc.goal.metric} ${meanText(winner)} over ${over}${apart}; one-standard-error pick: trial ${pick.trialId} (${pick.weights} weights)`;
}

/** The repeat figures as table rows (for the report): trial, runs, mean ± se, weights, against the winner, pick. */
export function repeatRows(doc: RepeatDoc): { header: string[]; rows: Record<string, string>[] } | undefined {
  const summary = studyRepeats(doc);
  if (!summary) return undefined;
  const header = ['trial', 'runs', `${doc.goal.metric} mean ± se`, 'weights', 'against the winner', 'pick'];
  const rows = summary.figures.map((f) => ({
    trial: String(f.trialId),
    runs: String(f.count),
    [header[2]!]: meanText(f),
    weights: String(f.weights),
    'against the winner': againstWinner(f, summary),
    pick: f.trialId === summary.pickId ? 'one-standard-error pick' : '',
  }));
  return { header, rows };
}
