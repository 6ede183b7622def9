import { plannedBudget, type SamplerPlan } from '../samplers/index.js';
import { withRepeats } from '../samplers/plan.js';
import type { RepeatSettings } from '../core/repeats.js';
import type { StudyDefinition } from '../study/definition.js';

/** The work a study's sampler plans, as the progress display counts it: the sampler kind's own plan. */
export type PlannedWork = SamplerPlan;

/** What the plan is read from: the budget, the sampler, and the repeat runs (absent in older study files: none). */
export type PlannedDefinition = Pick<StudyDefinition, 'budget' | 'sampler'> & { repeats?: RepeatSettings | undefined; data?: { folds?: number | undefined } };

/**
 * The plan of the study's sampler (`SamplerPlugin.plan`): jobs, epochs, rungs and brackets, with the
 * repeat runs after the search (`repeats`) in its jobs and epochs.
 * @example
 * plannedWork({ budget: { trials: 9, maxEpochs: 9 }, sampler: { kind: 'successive-halving', seed: 1, eta: 3, minEpochs: 1 } });
 * // { trials: 9, jobs: 13, epochs: 21, rungs: 3, brackets: 1, estimate: false }
 */
export function plannedWork(definition: PlannedDefinition): PlannedWork {
  return withRepeats(plannedBudget(definition), definition.repeats, definition.budget.maxEpochs, definition.data?.folds !== undefined);
}
