import { plannedBudget, type SamplerPlan } from '../samplers/index.js';
import type { StudyDefinition } from '../study/definition.js';

/** The work a study's sampler plans, as the progress display counts it: the sampler kind's own plan. */
export type PlannedWork = SamplerPlan;

/**
 * The plan of the study's sampler (`SamplerPlugin.plan`): jobs, epochs, rungs and brackets.
 * @example
 * plannedWork({ budget: { trials: 9, maxEpochs: 9 }, sampler: { kind: 'successive-halving', seed: 1, eta: 3, minEpochs: 1 } });
 * // { trials: 9, jobs: 13, epochs: 21, rungs: 3, brackets: 1, estimate: false }
 */
export function plannedWork(definition: Pick<StudyDefinition, 'budget' | 'sampler'>): PlannedWork {
  return plannedBudget(definition);
}
