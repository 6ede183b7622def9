import { paramsForTrial } from '../space/sample.js';
import type { StudyDefinition } from '../study/definition.js';
import { stream } from '../random/streams.js';
import { SAMPLER_PLUGINS } from './registry.js';
import type { Sampler, SamplerContext, SamplerPlugin } from './sampler.js';

export type { Job, JobOutcome, ProposalOrigin, Sampler, SamplerContext, SamplerPlugin, SamplerTraits } from './sampler.js';
export { defineSampler } from './sampler.js';
export { SAMPLER_PLUGINS, samplerSchema } from './registry.js';
export { AsyncHalvingSampler } from './async-halving.js';
export { HyperbandSampler, hyperbandSchedule, largestBracket, scheduledEpochs, trainedEpochs } from './hyperband.js';
export type { HyperbandBracketPlan } from './hyperband.js';
export { RandomSampler } from './random.js';
export { HalvingBracket, SuccessiveHalvingSampler, halvingSchedule } from './successive-halving.js';
export type { RungPlan } from './successive-halving.js';
export { replay, type ReplayResult } from './replay.js';
export { TpeSampler, type TpeSamplerOptions } from './tpe.js';
export { TpeHyperbandSampler, type TpeHyperbandOptions } from './tpe-hyperband.js';
export { TpeModel, splitObservations, type Observation, type TpeModelSettings } from './tpe-model.js';
export { spaceDesign, sobolDesign, type UnitDesign } from './design.js';
export { simulate, type SimulationLog, type SimulationOptions } from './simulate.js';
export { compareResults, rungEpochs } from './rungs.js';

type SamplerDefinition = Pick<StudyDefinition, 'space' | 'budget' | 'sampler'>;

/** The registered plugin of a sampler kind. */
export function samplerPlugin(kind: string): SamplerPlugin {
  const plugin = SAMPLER_PLUGINS.find((candidate) => candidate.kind === kind);
  if (!plugin) throw new Error(`no sampler of kind '${kind}' is registered`);
  // Each plugin's options type is its own schema's output; the study schema chose the plugin by the same kind.
  return plugin as unknown as SamplerPlugin;
}

/** The seeded context a study gives its sampler. */
export function samplerContext(definition: SamplerDefinition): SamplerContext {
  const { space, budget, sampler } = definition;
  return {
    space,
    budget,
    seed: sampler.seed,
    randomParams: (trialId) => paramsForTrial(space, sampler.seed, trialId),
    stream: (...key) => stream(sampler.seed, 'sampler', sampler.kind, ...key),
  };
}

/** A fresh sampler of the kind the study definition names. */
export function createSampler(definition: SamplerDefinition): Sampler {
  return samplerPlugin(definition.sampler.kind).create(definition.sampler, samplerContext(definition));
}

/** Configurations and epochs the study's sampler runs at most (0 and 0 when its options do not fit the budget). */
export function plannedBudget(definition: Pick<StudyDefinition, 'budget' | 'sampler'>): { trials: number; epochs: number } {
  return samplerPlugin(definition.sampler.kind).plan(definition.sampler, definition.budget);
}

/** Configurations the study's sampler will start (Hyperband derives its own count and ignores budget.trials). */
export function plannedTrialCount(definition: Pick<StudyDefinition, 'budget' | 'sampler'>): number {
  return plannedBudget(definition).trials;
}
