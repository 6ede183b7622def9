import { z } from 'zod';
import type { EarlyStoppingRule } from './early-stopping.js';

/** A seed as the study file takes it: a 31-bit non-negative integer. */
export const seedField = z.int().min(0).max(2 ** 31 - 1);

/** Options every halving sampler shares (successive halving, Hyperband, asynchronous halving and those built on them). */
export const halvingFields = {
  seed: seedField.default(0),
  eta: z.int().min(2).default(3).describe('Reduction factor: the top 1/eta of a rung goes on.'),
  minEpochs: z.int().min(1).default(1).describe('Epochs of the first rung.'),
};

export const earlyStoppingSchema = z
  .discriminatedUnion('rule', [
    z.strictObject({
      rule: z.literal('patience').describe('Stop when the goal has not improved for `patience` epochs.'),
      patience: z.int().min(1).describe('Epochs without an improvement after which the trial stops.'),
      minDelta: z.number().min(0).default(0).describe('Smallest change of the goal that counts as an improvement (default 0: any).'),
    }),
    z.strictObject({
      rule: z.literal('generalisation-loss').describe('Prechelt (1998): stop after the first epoch with GL = 100 (E / E_opt - 1) > alpha, E the goal as an error.'),
      alpha: z.number().gt(0).describe('Generalisation loss in percent above which the trial stops.'),
    }),
  ])
  .describe('Stop a trial inside its job when the goal stops improving; the trial is scored, ranked and exported at its best epoch. Absent: every trial trains the epochs its sampler gives it.');

// The schema gives exactly the rule early-stopping.ts works with (checked when compiling).
const sameRule: [z.output<typeof earlyStoppingSchema>, EarlyStoppingRule] extends [EarlyStoppingRule, z.output<typeof earlyStoppingSchema>] ? true : never = true;
void sameRule;
