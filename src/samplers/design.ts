/**
 * What a sampler that proposes points of the unit cube needs to know about the space: its dimensions
 * and the configuration at a point. The rungwise search space is one such design; tests use others
 * (closed-form functions of a few reals).
 */
import type { Rng } from '../random/streams.js';
import { configurationAt, snap, spaceDimensions, unitOf, type Dimension, type DimensionValue } from '../space/dimensions.js';
import { SobolSequence, digitalShift } from '../space/sobol.js';
import type { SearchSpace } from '../space/schema.js';
import type { TrialConfiguration } from '../core/configuration.js';

export interface UnitDesign {
  dimensions: readonly Dimension[];
  /** The configuration a trial at this point trains. */
  configurationAt(point: readonly number[]): TrialConfiguration;
  /**
   * The configuration the study lists for trial `trialId` to try first (`tryFirst`), with its point
   * (clamped to the unit cube), or undefined: samplers that propose points give these trials exactly
   * this configuration and let their model see it at this point.
   */
  listed?(trialId: number): ListedConfiguration | undefined;
}

/** A configuration the study asks to try first, and its point of the unit cube. */
export interface ListedConfiguration {
  configuration: TrialConfiguration;
  point: number[];
}

/**
 * The design of a rungwise search space (see `space/dimensions.ts`), with the configurations to try
 * first; `narrow` cuts the configuration at a point to the study's weight limit (the model still sees
 * the point it proposed).
 */
export function spaceDesign(space: SearchSpace, tryFirst: readonly TrialConfiguration[] = [], narrow: (configuration: TrialConfiguration) => TrialConfiguration = (c) => c): UnitDesign {
  const dimensions = spaceDimensions(space);
  const listed = tryFirst.map((configuration) => ({ configuration, point: nearestPoint(dimensions, configuration) }));
  return { dimensions, configurationAt: (point) => narrow(configurationAt(space, point)), listed: (trialId) => listed[trialId] };
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

/**
 * The point of a configuration that may lie outside the space: each coordinate clamped to [0, 1], a
 * number choice that the space lacks at its nearest choice, another missing choice at the centre.
 */
function nearestPoint(dimensions: readonly Dimension[], configuration: TrialConfiguration): number[] {
  const values: Readonly<Record<string, DimensionValue | undefined>> = { ...configuration };
  return dimensions.map((dimension) => {
    const value = values[dimension.name] ?? (dimension.kind === 'numeric' ? dimension.min : dimension.choices[0]!);
    if (dimension.kind === 'categorical' && !dimension.choices.includes(value)) {
      if (typeof value !== 'number') return 0.5;
      const numbers = dimension.choices.map(Number);
      const nearest = numbers.reduce((best, choice) => (Math.abs(choice - value) < Math.abs(best - value) ? choice : best), numbers[0]!);
      return unitOf(dimension, dimension.choices[numbers.indexOf(nearest)]!);
    }
    return Math.min(1, Math.max(0, unitOf(dimension, value)));
  });
}
