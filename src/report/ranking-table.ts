import type { Objective } from '../study/definition.js';
import type { RankedTrial } from '../study/objective.js';
import { formatNumber, textTable } from './format.js';

/** The ranking as a text table: rank, trial, rung, epochs, objective and the configuration. */
export function rankingTable(ranking: readonly RankedTrial[], objective: Objective): string {
  const header = ['rank', 'trial', 'rung', 'epochs', objective.metric, 'depth', 'width', 'activation', 'learning rate', 'batch', 'optimizer', 'l2', 'dropout'];
  const rows = ranking.map(({ rank, trial }) => [
    String(rank),
    String(trial.id),
    String(trial.rung),
    String(trial.epochsTrained),
    formatNumber(trial.objective),
    String(trial.params.depth),
    String(trial.params.width),
    trial.params.activation,
    formatNumber(trial.params.learningRate),
    String(trial.params.batchSize),
    trial.params.optimizer,
    formatNumber(trial.params.l2),
    formatNumber(trial.params.dropout),
  ]);
  return textTable(header, rows);
}

/** The ranking as plain data for `--json`. */
export function rankingJson(ranking: readonly RankedTrial[], objective: Objective): unknown {
  return {
    objective,
    ranking: ranking.map(({ rank, trial }) => ({
      rank,
      trial: trial.id,
      status: trial.status,
      rung: trial.rung,
      epochs: trial.epochsTrained,
      objective: trial.objective,
      params: trial.params,
      seed: trial.seed,
      metrics: trial.curve.at(-1)?.metrics ?? {},
    })),
  };
}
