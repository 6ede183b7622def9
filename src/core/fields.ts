import { z } from 'zod';

/** A seed as the study file takes it: a 31-bit non-negative integer. */
export const seedField = z.int().min(0).max(2 ** 31 - 1);

/** Options every halving sampler shares (successive halving, Hyperband, asynchronous halving and those built on them). */
export const halvingFields = {
  seed: seedField.default(0),
  eta: z.int().min(2).default(3).describe('Reduction factor: the top 1/eta of a rung goes on.'),
  minEpochs: z.int().min(1).default(1).describe('Epochs of the first rung.'),
};
