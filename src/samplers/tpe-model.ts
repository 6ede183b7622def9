/**
 * The tree-structured Parzen estimator's proposal step over the unit cube: split the observations at
 * the quantile gamma into good and rest, fit one Parzen estimator per dimension to each, draw
 * candidates from the good density l(x), and keep the one with the largest l(x) / g(x).
 * Source: Bergstra, Bardenet, Bengio, Kégl, "Algorithms for Hyper-Parameter Optimization", NeurIPS 2011,
 * sections 4 and 4.1 (maximising l/g maximises expected improvement).
 * The search space has no conditional parameters, so the "tree" is a product of independent dimensions.
 */
import { z } from 'zod';
import type { Rng } from '../random/streams.js';
import { snap, type Dimension } from '../space/dimensions.js';
import { BANDWIDTH_RULES, drawIndex, fitCategorical, fitNumeric, numericDensity, sampleNumeric, type BandwidthRule, type NumericParzen } from './parzen.js';
import { rank } from './rungs.js';
import { orderByFronts } from './two-goals.js';

/** A configuration the model learns from: its unit-cube point and its loss (null: diverged, failed, or a pending trial under the constant liar). */
export interface Observation {
  trialId: number;
  point: readonly number[];
  loss: number | null;
  /** With a study's second goal: the configuration's value of it, smaller better (`two-goals.ts`). */
  second?: number;
}

export interface TpeModelSettings {
  /** Share of observations in the good group (the quantile gamma). */
  gamma: number;
  /** Candidates drawn from l(x) per proposal. */
  drawsPerProposal: number;
  wideKernelWeight: number;
  bandwidth: BandwidthRule;
  /** Kernel widths are multiplied by this when drawing candidates (not when scoring them). */
  drawWidening: number;
  /** Least observations in each group; when there are fewer in all, the groups overlap. @default 1 */
  minimumGroup?: number;
}

/**
 * Good and rest: the best max(minimumGroup, ceil(gamma n)) observations and the others, but at least
 * minimumGroup of the worst. Best: smaller loss first, null last, ties by lower trial id; with a
 * second goal (every observation has `second`), the multiobjective order of `two-goals.ts`.
 */
export function splitObservations(observations: readonly Observation[], gamma: number, minimumGroup = 1): { good: Observation[]; rest: Observation[] } {
  const ranked = bestFirst(observations);
  const n = ranked.length;
  const goodCount = Math.min(n, Math.max(minimumGroup, Math.ceil(gamma * n)));
  const restCount = Math.min(n, Math.max(minimumGroup, n - goodCount));
  return { good: ranked.slice(0, goodCount), rest: ranked.slice(n - restCount) };
}

function bestFirst(observations: readonly Observation[]): Observation[] {
  const withSecond = observations.filter((o): o is Observation & { second: number } => o.second !== undefined);
  if (withSecond.length > 0) {
    if (withSecond.length < observations.length) throw new Error('tpe model: some observations have a second-goal value and some do not');
    return orderByFronts(withSecond);
  }
  const byTrial = new Map(observations.map((o) => [o.trialId, o]));
  return rank(observations.map(({ trialId, loss }) => ({ trialId, loss }))).map((r) => byTrial.get(r.trialId)!);
}

type DimensionDensity = { kind: 'numeric'; parzen: NumericParzen } | { kind: 'categorical'; probabilities: number[] };

/** Cell index of a categorical coordinate. */
const cellOf = (u: number, choices: number) => Math.min(choices - 1, Math.floor(u * choices));

function fitDensities(dimensions: readonly Dimension[], observations: readonly Observation[], settings: TpeModelSettings): DimensionDensity[] {
  return dimensions.map((dimension, d) => {
    const coordinates = observations.map((o) => o.point[d]!);
    if (dimension.kind === 'categorical') {
      const k = dimension.choices.length;
      return { kind: 'categorical', probabilities: fitCategorical(coordinates.map((u) => cellOf(u, k)), k, settings.wideKernelWeight) };
    }
    return { kind: 'numeric', parzen: fitNumeric(coordinates, settings) };
  });
}

function logDensity(densities: readonly DimensionDensity[], point: readonly number[]): number {
  let sum = 0;
  densities.forEach((density, d) => {
    const u = point[d]!;
    sum += Math.log(density.kind === 'numeric' ? numericDensity(density.parzen, u) : density.probabilities[cellOf(u, density.probabilities.length)]!);
  });
  return sum;
}

function drawCandidate(densities: readonly DimensionDensity[], rng: Rng, bandwidthFactor: number): number[] {
  return densities.map((density) => {
    if (density.kind === 'numeric') return sampleNumeric(density.parzen, rng, bandwidthFactor);
    const k = density.probabilities.length;
    return (drawIndex(density.probabilities, rng()) + 0.5) / k;
  });
}

/** A fitted pair of densities: l(x) over the good observations and g(x) over the rest. */
export class TpeModel {
  private readonly good: DimensionDensity[];
  private readonly rest: DimensionDensity[];

  constructor(readonly dimensions: readonly Dimension[], observations: readonly Observation[], private readonly settings: TpeModelSettings) {
    if (observations.length === 0) throw new RangeError('the tree-structured Parzen estimator needs at least one observation');
    const { good, rest } = splitObservations(observations, settings.gamma, settings.minimumGroup ?? 1);
    this.good = fitDensities(dimensions, good, settings);
    this.rest = fitDensities(dimensions, rest, settings);
  }

  /** log l(x) - log g(x). */
  score(point: readonly number[]): number {
    return logDensity(this.good, point) - logDensity(this.rest, point);
  }

  /**
   * The candidate with the largest l(x) / g(x) among `settings.drawsPerProposal` drawn from l(x) (ties: the
   * first drawn), moved to the centres of its integer and categorical cells.
   */
  propose(rng: Rng): { point: number[]; score: number } {
    let best: { point: number[]; score: number } | undefined;
    for (let i = 0; i < this.settings.drawsPerProposal; i++) {
      const point = drawCandidate(this.good, rng, this.settings.drawWidening);
      const score = this.score(point);
      if (!best || score > best.score) best = { point, score };
    }
    return { point: snap(this.dimensions, best!.point), score: best!.score };
  }
}

interface ModelDefaults {
  gamma: number;
  drawsPerProposal: number;
  bandwidth: BandwidthRule;
  drawWidening: number;
}

/** The model's options in a sampler's study-file schema, with the kind's own defaults. */
export function modelFields(defaults: ModelDefaults) {
  return {
    gamma: z.number().gt(0).lt(1).default(defaults.gamma).describe('Share of finished trials that form the good group.'),
    drawsPerProposal: z.int().min(1).max(10000).default(defaults.drawsPerProposal).describe('Configurations drawn from the good density for each proposal; the one the good group favours most over the bad is proposed.'),
    wideKernelWeight: z.number().gt(0).default(1).describe('Weight of one wide kernel over the whole range (for a choice: counts spread evenly over its values) against 1 per finished trial.'),
    bandwidth: z.enum(BANDWIDTH_RULES).default(defaults.bandwidth).describe('Kernel width rule: neighbour-gap or scott.'),
    drawWidening: z.number().min(1).default(defaults.drawWidening).describe('Kernel widths are multiplied by this when drawing configurations to propose (not when scoring them).'),
  };
}
