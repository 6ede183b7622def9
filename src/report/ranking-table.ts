import type { Goal, TrialConfiguration } from '../core/configuration.js';
import { isFinished, type RankedTrial } from '../core/ranking.js';
import { flagsText } from '../core/health.js';
import { scheduleInWords } from '../core/schedule.js';
import { regularisersInWords } from '../core/regularisers.js';
import { formatNumber, textTable } from './format.js';

/** A score as the ranking shows it: with folds, the fold mean ± its standard error. */
export function scoreText(score: number | null, standardError?: number): string {
  return standardError === undefined || score === null ? formatNumber(score) : `${formatNumber(score)} ± ${formatNumber(standardError)}`;
}

/** A configuration's preprocessing choice in a few words, e.g. `robust-clip, pooled below 20`. */
function preprocessingInWords(configuration: RankedTrial['trial']['configuration']): string {
  const pool = configuration.poolCategoriesBelow ?? 0;
  const encoding = configuration.numericEncoding ?? 'none';
  return `${configuration.numericInputs ?? 'standardise'}${encoding === 'none' ? '' : `, ${encoding}`}${pool > 0 ? `, pooled below ${pool}` : ''}`;
}

/** The ranking as a text table: rank, trial, rung, epochs, score (± standard error with folds) and the configuration. */
export function rankingTable(ranking: readonly RankedTrial[], goal: Goal): string {
  const folds = ranking.some(({ trial }) => trial.scoreStandardError !== undefined);
  // Columns for schedules and early stopping only when a trial has them, so other rankings read as before.
  const schedules = ranking.some(({ trial }) => trial.configuration.schedule !== undefined);
  const stopping = ranking.some(({ trial }) => trial.bestEpoch !== undefined);
  const shapes = ranking.some(({ trial }) => trial.configuration.shape !== undefined);
  const blocks = ranking.some(({ trial }) => trial.configuration.block !== undefined);
  const preprocessing = ranking.some(({ trial }) => trial.configuration.numericInputs !== undefined || trial.configuration.poolCategoriesBelow !== undefined || trial.configuration.numericEncoding !== undefined);
  const weightings = ranking.some(({ trial }) => trial.configuration.classWeights !== undefined);
  const flagged = ranking.some(({ trial }) => (trial.flags?.length ?? 0) > 0);
  const regularised = ranking.some(({ trial }) => regularisersInWords(trial.configuration) !== undefined);
  // Classification: accuracy and macro-F1 side by side (besides the goal's metric), to see what class weights trade.
  const scoredPoint = (trial: RankedTrial['trial']) => (trial.bestEpoch !== undefined ? trial.curve.find((p) => p.epoch === trial.bestEpoch) : trial.curve.at(-1));
  const sideBySide = (['accuracy', 'macroF1'] as const).filter((name) => name !== goal.metric && ranking.some(({ trial }) => scoredPoint(trial)?.metrics[name] !== undefined));
  // The cost goal is per row; a column per 1,000 rows reads as an amount a user can weigh.
  const perThousand = goal.metric === 'cost';
  const header = ['rank', 'trial', 'rung', 'epochs', ...(stopping ? ['best epoch'] : []), folds ? `${goal.metric} (fold mean ± SE)` : goal.metric, ...(perThousand ? ['cost per 1,000 rows'] : []), ...sideBySide, 'depth', 'width', ...(shapes ? ['shape'] : []), ...(blocks ? ['block'] : []), 'activation', 'learning rate', ...(schedules ? ['schedule'] : []), 'batch', 'optimizer', 'l2', 'dropout', ...(regularised ? ['regularisers'] : []), ...(preprocessing ? ['preprocessing'] : []), ...(weightings ? ['class weights'] : []), ...(flagged ? ['flags'] : [])];
  const rows = ranking.map(({ rank, trial }) => [
    String(rank),
    String(trial.id),
    String(trial.rung),
    String(trial.epochsTrained) + (trial.stoppedEarly ? ' (stopped)' : ''),
    ...(stopping ? [trial.bestEpoch === undefined ? '-' : String(trial.bestEpoch)] : []),
    scoreText(trial.score, trial.scoreStandardError),
    ...(perThousand ? [trial.score === null ? '-' : formatNumber(trial.score * 1000)] : []),
    ...sideBySide.map((name) => formatNumber(scoredPoint(trial)?.metrics[name])),
    String(trial.configuration.depth),
    String(trial.configuration.width),
    ...(shapes ? [trial.configuration.shape ?? 'constant'] : []),
    ...(blocks ? [trial.configuration.block ?? 'plain'] : []),
    trial.configuration.activation,
    formatNumber(trial.configuration.learningRate),
    ...(schedules ? [scheduleInWords(trial.configuration) ?? 'constant'] : []),
    String(trial.configuration.batchSize),
    trial.configuration.optimizer,
    formatNumber(trial.configuration.l2),
    formatNumber(trial.configuration.dropout),
    ...(regularised ? [regularisersInWords(trial.configuration) ?? '-'] : []),
    ...(preprocessing ? [preprocessingInWords(trial.configuration)] : []),
    ...(weightings ? [classWeightingText(trial.configuration)] : []),
    ...(flagged ? [flagsText(trial.flags) || '-'] : []),
  ]);
  return textTable(header, rows);
}

/** A trial's class weighting in a few words: the weighting, with its beta for `effective`. */
export function classWeightingText(configuration: TrialConfiguration): string {
  const { classWeights, effectiveBeta } = configuration;
  if (classWeights === undefined) return '-';
  return classWeights === 'effective' ? `effective (beta ${formatNumber(effectiveBeta)})` : classWeights;
}

/** The ranking as plain data for `--json`. */
export function rankingJson(ranking: readonly RankedTrial[], goal: Goal): unknown {
  return {
    goal,
    ranking: ranking.map(({ rank, trial }) => ({
      rank,
      trial: trial.id,
      status: trial.status,
      finished: isFinished(trial),
      flags: trial.flags ?? [],
      rung: trial.rung,
      epochs: trial.epochsTrained,
      score: trial.score,
      ...(trial.scoreStandardError !== undefined ? { scoreStandardError: trial.scoreStandardError } : {}),
      configuration: trial.configuration,
      seed: trial.seed,
      metrics: (trial.bestEpoch !== undefined ? trial.curve.find((p) => p.epoch === trial.bestEpoch) : trial.curve.at(-1))?.metrics ?? {},
      ...(trial.bestEpoch !== undefined ? { bestEpoch: trial.bestEpoch } : {}),
      ...(trial.stoppedAtEpoch !== undefined ? { stoppedAtEpoch: trial.stoppedAtEpoch } : {}),
    })),
  };
}
