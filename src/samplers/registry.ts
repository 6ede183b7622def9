/**
 * Every sampler kind rungwise knows. A new kind is one file (its sampler, its options schema and its
 * plugin) plus its line here; the study schema, the JSON Schema for editors, `createSampler` and the
 * sampler contract suite all read this list.
 */
import { z } from 'zod';
import { asyncHalvingPlugin } from './async-halving.js';
import { hyperbandPlugin } from './hyperband.js';
import { randomPlugin } from './random.js';
import { sobolPlugin } from './sobol.js';
import { successiveHalvingPlugin } from './successive-halving.js';
import { tpeHyperbandPlugin } from './tpe-hyperband.js';
import { tpePlugin } from './tpe.js';

/** The `sampler` object of a study file: one of the registered kinds, chosen by `kind`. */
export const samplerSchema = z.discriminatedUnion('kind', [
  randomPlugin.schema,
  successiveHalvingPlugin.schema,
  hyperbandPlugin.schema,
  asyncHalvingPlugin.schema,
  sobolPlugin.schema,
  tpePlugin.schema,
  tpeHyperbandPlugin.schema,
]);

/** The registered plugins, in the order the README lists them. */
export const SAMPLER_PLUGINS = [
  randomPlugin,
  successiveHalvingPlugin,
  hyperbandPlugin,
  asyncHalvingPlugin,
  sobolPlugin,
  tpePlugin,
  tpeHyperbandPlugin,
] as const;

/** The study file's `sampler` object, validated, with its kind's defaults applied. */
export type SamplerSettings = z.output<typeof samplerSchema>;
