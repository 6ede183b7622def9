import { configurationForTrial } from '../space/sample.js';
import type { Budget } from '../core/budget.js';
import type { SearchSpace } from '../space/schema.js';
import type { TrialConfiguration } from '../core/configuration.js';
import { stream } from '../random/streams.js';
import { fitWeightLimit, type NetworkShape } from '../core/size.js';
import type { SamplerPlan } from './plan.js';
import { SAMPLER_PLUGINS, type SamplerSettings } from './registry.js';
import type { Sampler, SamplerContext, SamplerPlugin, SamplerTraits } from './sampler.js';
import type { SecondGoalMeasure } from './two-goals.js';

export { EMPTY_PLAN, type SamplerPlan } from './plan.js';
export type { Job, JobOutcome, Sampler, SamplerContext, SamplerPlugin, SamplerTraits } from './sampler.js';
export type { ProposalOrigin } from '../core/trial.js';
export { defineSampler } from './sampler.js';
export { SAMPLER_PLUGINS, samplerSchema } from './registry.js';
export { AsyncHalvingSampler } from './async-halving.js';
export { HyperbandSampler, hyperbandSchedule, largestBracket, scheduledEpochs } from './hyperband.js';
export { trainedEpochs } from './plan.js';
export type { HyperbandBracketPlan } from './hyperband.js';
export { RandomSampler } from './random.js';
export { HalvingBracket, SuccessiveHalvingSampler, halvingSchedule } from './successive-halving.js';
export type { RungPlan } from './plan.js';
export { replay, type ReplayResult } from './replay.js';
export { TpeSampler, type TpeSamplerOptions } from './tpe.js';
export { TpeHyperbandSampler, type TpeHyperbandOptions } from './tpe-hyperband.js';
export { TpeModel, splitObservations, type Observation, type TpeModelSettings } from './tpe-model.js';
export { spaceDesign, sobolDesign, type UnitDesign } from './design.js';
export { secondGoalMeasure, orderByFronts, hypervolumeContributions, type SecondGoalMeasure } from './two-goals.js';
export { simulate, type SimulationLog, type SimulationOptions } from './simulate.js';
export { compareResults, rungEpochs } from './rungs.js';

/** What a study gives its sampler: the search space, the budget and the study file's `sampler` object. */
export interface SamplerDefinition {
  space: SearchSpace;
  budget: Budget;
  sampler: SamplerSettings;
  /** Configurations to try first, in order (the study's `tryFirst`). */
  tryFirst?: readonly TrialConfiguration[];
  /** The study's weight limit with the data's shape (`footprint.maxWeights`); absent: no limit. */
  weightLimit?: WeightLimit;
  /** The study's second goal (`footprint.against`) as TPE measures it (`secondGoalMeasure`); absent: one goal. */
  secondGoal?: SecondGoalMeasure;
}

/** A largest network in weights, for the data's shape. */
export interface WeightLimit {
  maxWeights: number;
  /** The data's shape: the study's own data set. */
  shape: NetworkShape;
  /** Model inputs of the data prepared for a configuration's preprocessing choice; absent: `shape.inputs` for every configuration. */
  inputsFor?: (configuration: TrialConfiguration) => number;
}

/** Cuts a drawn configuration to the weight limit (see `fitWeightLimit`), sized by its own inputs; the identity without one. */
export function narrowing(space: SearchSpace, limit: WeightLimit | undefined): (configuration: TrialConfiguration) => TrialConfiguration {
  if (limit === undefined) return (configuration) => configuration;
  return (configuration) => {
    const shape = limit.inputsFor ? { ...limit.shape, inputs: limit.inputsFor(configuration) } : limit.shape;
    const fitted = fitWeightLimit(configuration, shape, limit.maxWeights, space);
    // The study is refused before its first trial when the smallest network of the space is over the limit.
    if (fitted === undefined) throw new Error(`no network of the space fits ${limit.maxWeights} weights`);
    return fitted;
  };
}

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
  const tryFirst = definition.tryFirst ?? [];
  const narrow = narrowing(space, definition.weightLimit);
  return {
    space,
    budget,
    seed: sampler.seed,
    tryFirst,
    narrow,
    ...(definition.secondGoal ? { secondGoal: definition.secondGoal } : {}),
    // A listed configuration takes its trial's place; every other trial draws as without the list (cut to the weight limit).
    randomConfiguration: (trialId) => tryFirst[trialId] ?? narrow(configurationForTrial(space, sampler.seed, trialId)),
    stream: (...key) => stream(sampler.seed, 'sampler', sampler.kind, ...key),
  };
}

/** What the sampler kind promises and how it works (see {@link SamplerTraits}). */
export function samplerTraits(kind: string): SamplerTraits {
  return samplerPlugin(kind).traits;
}

/** A fresh sampler of the kind the study definition names. */
export function createSampler(definition: SamplerDefinition): Sampler {
  return samplerPlugin(definition.sampler.kind).create(definition.sampler, samplerContext(definition));
}

/** The work the study's sampler plans for its budget, as the sampler kind itself says (nothing when its options do not fit). */
export function plannedBudget(definition: Pick<SamplerDefinition, 'budget' | 'sampler'>): SamplerPlan {
  return samplerPlugin(definition.sampler.kind).plan(definition.sampler, definition.budget);
}

/** A budget the study's sampler cannot honour, as `[field, message]` (see `SamplerPlugin.budgetProblem`). */
export function samplerBudgetProblem(definition: Pick<SamplerDefinition, 'budget' | 'sampler'>): [string, string] | undefined {
  const problem = samplerPlugin(definition.sampler.kind).budgetProblem?.(definition.sampler, definition.budget);
  return problem ? [problem.field, problem.message] : undefined;
}

/** Configurations the study's sampler will start. */
export function plannedTrialCount(definition: Pick<SamplerDefinition, 'budget' | 'sampler'>): number {
  return plannedBudget(definition).trials;
}
