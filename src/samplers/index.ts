import { UserError } from '../errors.js';
import { paramsForTrial } from '../space/sample.js';
import type { StudyDefinition } from '../study/definition.js';
import { AsyncHalvingSampler } from './async-halving.js';
import { HyperbandSampler, hyperbandSchedule } from './hyperband.js';
import { RandomSampler } from './random.js';
import type { Sampler } from './sampler.js';
import { SuccessiveHalvingSampler } from './successive-halving.js';

export type { Job, JobOutcome, Sampler } from './sampler.js';
export { AsyncHalvingSampler } from './async-halving.js';
export { HyperbandSampler, hyperbandSchedule, largestBracket, scheduledEpochs, trainedEpochs } from './hyperband.js';
export type { HyperbandBracketPlan } from './hyperband.js';
export { RandomSampler } from './random.js';
export { HalvingBracket, SuccessiveHalvingSampler, halvingSchedule } from './successive-halving.js';
export type { RungPlan } from './successive-halving.js';
export { replay, type ReplayResult } from './replay.js';
export { simulate, type SimulationLog, type SimulationOptions } from './simulate.js';
export { compareResults, rungEpochs } from './ranking.js';

type SamplerDefinition = Pick<StudyDefinition, 'space' | 'budget' | 'sampler'>;

/** The sampler a study definition names; configurations come from `paramsForTrial(space, sampler.seed, id)`. */
export function createSampler(definition: SamplerDefinition): Sampler {
  const { space, budget, sampler } = definition;
  const paramsFor = (trialId: number) => paramsForTrial(space, sampler.seed, trialId);
  if (sampler.kind === 'random') return new RandomSampler({ trials: budget.trials, maxEpochs: budget.maxEpochs, paramsFor });
  // The schema checks each field alone; this pair is checked here, before any plan is built.
  if (sampler.minEpochs > budget.maxEpochs) {
    throw new UserError(
      'E_STUDY_INVALID',
      `study definition: sampler.minEpochs is ${sampler.minEpochs} but budget.maxEpochs is ${budget.maxEpochs}; minEpochs must not exceed maxEpochs`,
    );
  }
  const halving = { minEpochs: sampler.minEpochs, maxEpochs: budget.maxEpochs, eta: sampler.eta, paramsFor };
  switch (sampler.kind) {
    case 'successive-halving':
      return new SuccessiveHalvingSampler({ ...halving, trials: budget.trials });
    case 'hyperband':
      return new HyperbandSampler(halving);
    case 'async-halving':
      return new AsyncHalvingSampler({ ...halving, trials: budget.trials });
  }
}

/** Configurations the study's sampler will start (Hyperband derives its own count and ignores budget.trials). */
export function plannedTrialCount(definition: Pick<StudyDefinition, 'budget' | 'sampler'>): number {
  const { budget, sampler } = definition;
  if (sampler.kind !== 'hyperband') return budget.trials;
  if (sampler.minEpochs > budget.maxEpochs) return 0;
  return hyperbandSchedule(budget.maxEpochs, sampler.eta, sampler.minEpochs).reduce(
    (sum, bracket) => sum + bracket.rounds[0]!.configurations,
    0,
  );
}
