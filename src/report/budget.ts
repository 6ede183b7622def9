import { halvingSchedule, hyperbandSchedule, trainedEpochs } from '../samplers/index.js';
import type { StudyDefinition } from '../study/definition.js';
import type { StudyDocument } from '../store/types.js';

/** The work a study's sampler plans: jobs (one per configuration and rung) and epochs trained. */
export interface PlannedWork {
  jobs: number;
  epochs: number;
  /** Rungs per bracket (1 for random search). */
  rungs: number;
  /** Brackets (Hyperband), else 1. */
  brackets: number;
  /** Asynchronous halving promotes by timing: its plan is the synchronous one, an estimate. */
  estimate: boolean;
}

/**
 * What the sampler will train if nothing diverges: random search trains every configuration to
 * maxEpochs; successive halving and Hyperband follow their schedules, promoted trials continuing from
 * their checkpoint (so a rung adds only its extra epochs); asynchronous halving is planned like
 * successive halving over the same configurations.
 */
export function plannedWork(definition: Pick<StudyDefinition, 'budget' | 'sampler'>): PlannedWork {
  const { budget, sampler } = definition;
  if (sampler.kind === 'random') {
    return { jobs: budget.trials, epochs: budget.trials * budget.maxEpochs, rungs: 1, brackets: 1, estimate: false };
  }
  if (sampler.minEpochs > budget.maxEpochs) return { jobs: 0, epochs: 0, rungs: 0, brackets: 0, estimate: false };
  if (sampler.kind === 'hyperband') {
    const brackets = hyperbandSchedule(budget.maxEpochs, sampler.eta, sampler.minEpochs);
    return {
      jobs: brackets.reduce((sum, b) => sum + b.rounds.reduce((n, round) => n + round.configurations, 0), 0),
      epochs: brackets.reduce((sum, b) => sum + trainedEpochs(b.rounds), 0),
      rungs: Math.max(...brackets.map((b) => b.rounds.length)),
      brackets: brackets.length,
      estimate: false,
    };
  }
  const rounds = halvingSchedule(budget.trials, sampler.minEpochs, budget.maxEpochs, sampler.eta);
  return {
    jobs: rounds.reduce((n, round) => n + round.configurations, 0),
    epochs: trainedEpochs(rounds),
    rungs: rounds.length,
    brackets: 1,
    estimate: sampler.kind === 'async-halving',
  };
}

/** Work a saved study has already done: one job per rung a trial finished, and the epochs it trained. */
export function doneWork(doc: Pick<StudyDocument, 'trials'>): { jobs: number; epochs: number } {
  let jobs = 0;
  let epochs = 0;
  for (const trial of doc.trials) {
    jobs += trial.rungObjectives.length;
    epochs += trial.epochsTrained;
  }
  return { jobs, epochs };
}
