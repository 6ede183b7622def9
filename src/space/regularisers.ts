/**
 * The regularisers a search space may add to a configuration, besides L2 and dropout: one
 * real-valued dimension each, drawn after every other field (one draw each, present or not), so a
 * space without them draws exactly the configurations it drew before they existed.
 */
import type { TrialConfiguration } from '../core/configuration.js';
import type { listedConfigurationSchema, SearchSpace } from './schema.js';
import type { z } from 'zod';

/** A regulariser's space key (also its configuration field) and the scale it is drawn on unless its range says. */
export interface RegulariserDimension {
  name: 'weightDecay' | 'maxGradientNorm' | 'labelSmoothing';
  defaultLog: boolean;
}

/** In draw order. A new one goes at the end, so the draws of those before it do not move. */
export const REGULARISERS: readonly RegulariserDimension[] = [
  { name: 'weightDecay', defaultLog: true },
  { name: 'maxGradientNorm', defaultLog: true },
  { name: 'labelSmoothing', defaultLog: false },
];

export type RegulariserName = RegulariserDimension['name'];

/** The regularisers this space searches, with their ranges, in draw order. */
export function spaceRegularisers(space: SearchSpace): { dimension: RegulariserDimension; range: NonNullable<SearchSpace[RegulariserName]> }[] {
  return REGULARISERS.flatMap((dimension) => {
    const range = space[dimension.name];
    return range ? [{ dimension, range }] : [];
  });
}

/** What is wrong with a listed configuration's regularisers for this space: each one the space searches must be given, no other. */
export function listedRegulariserProblem(entry: z.output<typeof listedConfigurationSchema>, space: SearchSpace): string | undefined {
  const searched = new Set(spaceRegularisers(space).map(({ dimension }) => dimension.name));
  const missing = REGULARISERS.filter(({ name }) => searched.has(name) && entry[name] === undefined).map(({ name }) => name);
  if (missing.length > 0) return `lacks ${missing.join(', ')}, which this space draws; give them`;
  const extra = REGULARISERS.filter(({ name }) => !searched.has(name) && entry[name] !== undefined).map(({ name }) => name);
  return extra.length > 0 ? `gives ${extra.join(', ')} but the space has no such range; leave them out or add the range to the space` : undefined;
}

/** The regulariser fields of a configuration, from the values of its dimensions by name (only those the space searches). */
export function regulariserFields(space: SearchSpace, valueOf: (name: RegulariserName) => number): Partial<TrialConfiguration> {
  return Object.fromEntries(spaceRegularisers(space).map(({ dimension }) => [dimension.name, valueOf(dimension.name)]));
}
