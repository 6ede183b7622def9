import { halvingSchedule, hyperbandSchedule, plannedBudget } from '../samplers/index.js';
import type { StudyDefinition } from '../study/definition.js';

/** The work a study's sampler plans, as the progress display counts it. */
export interface PlannedWork {
  /** Jobs (one per configuration and rung it trains through); undefined for a kind whose plan does not say. */
  jobs: number | undefined;
  /** Epochs trained at most: the sampler's own plan, as the runner reports it. */
  epochs: number;
  /** Rungs per bracket (1 for random search). */
  rungs: number;
  /** Brackets (Hyperband), else 1. */
  brackets: number;
  /**
   * Asynchronous halving promotes by timing, and can promote more than the synchronous plan
   * (a promoted trial may fall out of the top later, and another is promoted): its plan is an estimate.
   */
  estimate: boolean;
}

type Halving = { kind: string; eta: number; minEpochs: number };

/**
 * Epochs come from the sampler's plan (`plannedBudget`); jobs, rungs and brackets from the published
 * schedules of the halving samplers (for asynchronous halving, successive halving's of the same
 * configurations, as an estimate; Hyperband's for TPE inside Hyperband); random search and TPE train
 * each configuration in one job; another kind's jobs are not counted against a plan.
 * @example
 * plannedWork({ budget: { trials: 9, maxEpochs: 9 }, sampler: { kind: 'successive-halving', seed: 1, eta: 3, minEpochs: 1 } });
 * // { jobs: 13, epochs: 21, rungs: 3, brackets: 1, estimate: false }
 */
export function plannedWork(definition: Pick<StudyDefinition, 'budget' | 'sampler'>): PlannedWork {
  const { budget } = definition;
  const { epochs, trials } = plannedBudget(definition);
  const sampler = definition.sampler as unknown as Halving;
  // One job per configuration, to maxEpochs.
  if (sampler.kind === 'random' || sampler.kind === 'tpe') return { jobs: trials, epochs, rungs: 1, brackets: 1, estimate: false };
  const hyperbandLike = sampler.kind === 'hyperband' || sampler.kind === 'tpe-hyperband';
  const known = hyperbandLike || sampler.kind === 'successive-halving' || sampler.kind === 'async-halving';
  if (!known) return { jobs: undefined, epochs, rungs: 1, brackets: 1, estimate: false };
  if (sampler.minEpochs > budget.maxEpochs) return { jobs: 0, epochs: 0, rungs: 0, brackets: 0, estimate: false };
  if (hyperbandLike) {
    const brackets = hyperbandSchedule(budget.maxEpochs, sampler.eta, sampler.minEpochs);
    return {
      jobs: brackets.reduce((sum, b) => sum + b.rounds.reduce((n, round) => n + round.configurations, 0), 0),
      epochs,
      rungs: Math.max(...brackets.map((b) => b.rounds.length)),
      brackets: brackets.length,
      estimate: false,
    };
  }
  const rounds = halvingSchedule(budget.trials, sampler.minEpochs, budget.maxEpochs, sampler.eta);
  return { jobs: rounds.reduce((n, round) => n + round.configurations, 0), epochs, rungs: rounds.length, brackets: 1, estimate: sampler.kind === 'async-halving' };
}
