import { z } from 'zod';
import { seedField } from '../core/fields.js';
import { SOBOL_SCRAMBLES, sobolDesign, spaceDesign } from './design.js';
import { RandomSampler } from './random.js';
import { defineSampler } from './sampler.js';
import { oneJobEachPlan } from './plan.js';

/**
 * `sampler.kind: "sobol"`: like random search (every trial one job of maxEpochs), but trial k trains
 * point k of the Sobol sequence, which covers the space more evenly than independent draws.
 * Source: Joe, Kuo, SIAM J. Sci. Comput. 30, 2008 (direction numbers); see `space/sobol.ts`.
 */
export const sobolPlugin = defineSampler({
  kind: 'sobol',
  summary: 'every trial trains maxEpochs; configurations from the Sobol sequence (Joe and Kuo 2008), digitally shifted by the seed',
  schema: z.strictObject({
    kind: z.literal('sobol'),
    seed: seedField.default(0),
    scramble: z.enum(SOBOL_SCRAMBLES).default('shift').describe('shift: XOR a random digital shift drawn from the seed into every point; none: the plain sequence from the origin.'),
  }),
  traits: { deterministic: true, stopsAtRungs: false, trialsFromBudget: true },
  create: (options, context) => {
    const design = spaceDesign(context.space, context.tryFirst, context.narrow);
    const pointAt = sobolDesign(design.dimensions, options.scramble, context.stream('design'));
    return new RandomSampler({
      trials: context.budget.trials,
      maxEpochs: context.budget.maxEpochs,
      configurationFor: (trialId) => design.listed?.(trialId)?.configuration ?? design.configurationAt(pointAt(trialId)),
      originFor: (trialId) => ({ method: design.listed?.(trialId) ? 'listed' : 'sobol' }),
    });
  },
  plan: (_options, budget) => oneJobEachPlan(budget),
});

