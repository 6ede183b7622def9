/**
 * What a sampler that proposes points of the unit cube needs to know about the space: its dimensions
 * and the configuration at a point. The rungwise search space is one such design; tests use others
 * (closed-form functions of a few reals).
 */
import type { Rng } from '../random/streams.js';
import { paramsAt, snap, spaceDimensions, type Dimension } from '../space/dimensions.js';
import { SobolSequence, digitalShift } from '../space/sobol.js';
import type { SearchSpace } from '../space/schema.js';
import type { TrialConfiguration } from '../core/configuration.js';

export interface UnitDesign {
  dimensions: readonly Dimension[];
  /** The configuration a trial at this point trains. */
  paramsAt(point: readonly number[]): TrialConfiguration;
}

/** The design of a rungwise search space (see `space/dimensions.ts`). */
export function spaceDesign(space: SearchSpace): UnitDesign {
  return { dimensions: spaceDimensions(space), paramsAt: (point) => paramsAt(space, point) };
}

/** How the Sobol design is randomised by the seed. */
export type SobolScramble = 'shift' | 'none';
export const SOBOL_SCRAMBLES = ['shift', 'none'] as const satisfies readonly SobolScramble[];

/**
 * Point `index` of the Sobol design over `dimensions`, snapped to the centres of integer and
 * categorical cells. 'shift' XORs a random digital shift drawn from `rng` into every point (the same
 * seed gives the same design); 'none' is the plain sequence, starting at the origin.
 */
export function sobolDesign(dimensions: readonly Dimension[], scramble: SobolScramble, rng: Rng): (index: number) => number[] {
  const sequence = new SobolSequence(dimensions.length, scramble === 'shift' ? digitalShift(dimensions.length, rng) : undefined);
  return (index) => snap(dimensions, sequence.at(index));
}
