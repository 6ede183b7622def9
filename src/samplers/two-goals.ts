/**
 * TPE with a second goal (`footprint.against`): the order in which finished trials fill the good
 * group when each has a loss and a second value, both smaller-better. The multiobjective TPE of
 * Ozaki, Tanigaki, Watanabe, Onishi, "Multiobjective Tree-Structured Parzen Estimator for
 * Computationally Expensive Optimization Problems", GECCO 2020, section 3 (From memory): the good
 * group is filled front by front in the order of non-dominated sorting, and the front that does not
 * fit whole gives its points with the largest hypervolume contribution. What this file implements:
 * every point's contribution is computed once on its whole front (not recomputed as points are
 * taken), against one reference point for all fronts; observations without a loss come last.
 */
import { nonDominatedFronts, type SecondGoal } from '../core/front.js';
import { rowWork, weightCount, type NetworkShape } from '../core/size.js';
import type { TrialConfiguration } from '../core/configuration.js';

/** A finished (or pending) trial as TPE's split sees it: its loss (null: none) and its second value, both smaller-better. */
export interface TwoGoalObservation {
  trialId: number;
  loss: number | null;
  second: number;
}

/** A configuration's second-goal value for TPE, smaller better and known before training (see {@link secondGoalMeasure}). */
export type SecondGoalMeasure = (configuration: TrialConfiguration) => number;

/**
 * The value TPE weighs a configuration's loss against, from the configuration and the data's shape
 * alone so that proposals stay the same for any number of threads and after a resume: `weights` is
 * the weight count the trial records; `time` is the work of a row (`rowWork`: the dense layers'
 * fan-in x fan-out, and the residual blocks' normalisations), standing in for the measured time per
 * row, which varies with the load of the machine that measures it. `shape` may depend on the
 * configuration (its preprocessing choice sets the number of inputs).
 */
export function secondGoalMeasure(against: SecondGoal, shape: NetworkShape | ((configuration: TrialConfiguration) => NetworkShape)): SecondGoalMeasure {
  const shapeOf = typeof shape === 'function' ? shape : () => shape;
  const measure = against === 'weights' ? weightCount : rowWork;
  return (configuration) => {
    const { inputs, outputs } = shapeOf(configuration);
    return measure(configuration, inputs, outputs);
  };
}

/** Share of each goal's observed range the reference point lies beyond the worst value. Common practice (no source). */
export const REFERENCE_MARGIN = 0.1;

/**
 * The reference point for the hypervolume: on each goal the worst (largest) value among the points,
 * plus REFERENCE_MARGIN of the range (max - min) of that goal, so the extreme points of a front get a
 * contribution that is not zero.
 */
export function referencePoint(points: readonly (readonly [number, number])[]): [number, number] {
  const beyond = (goal: 0 | 1): number => {
    const values = points.map((p) => p[goal]);
    const worst = Math.max(...values);
    return worst + REFERENCE_MARGIN * (worst - Math.min(...values));
  };
  return [beyond(0), beyond(1)];
}

/**
 * Each point's exclusive hypervolume contribution to a two-goal front (points no one of which
 * dominates another, both goals minimised, all within `reference`). With the front sorted by the
 * first goal (ascending, so the second descends), point i's contribution is the rectangle to its
 * neighbours: (next's first goal - its own) x (previous's second goal - its own), the reference
 * point standing in for the missing neighbour at either end. Equal points contribute 0 each.
 */
export function hypervolumeContributions(front: readonly (readonly [number, number])[], reference: readonly [number, number]): number[] {
  const order = front.map((_, i) => i).sort((a, b) => front[a]![0] - front[b]![0] || front[a]![1] - front[b]![1] || a - b);
  const contributions = new Array<number>(front.length).fill(0);
  order.forEach((index, k) => {
    const nextFirst = k + 1 < order.length ? front[order[k + 1]!]![0] : reference[0];
    const previousSecond = k > 0 ? front[order[k - 1]!]![1] : reference[1];
    const [first, second] = front[index]!;
    contributions[index] = (nextFirst - first) * (previousSecond - second);
  });
  return contributions;
}

const hasLoss = <T extends TwoGoalObservation>(o: T): o is T & { loss: number } => o.loss !== null && !Number.isNaN(o.loss);

/**
 * All observations, best first, for TPE's split at gamma: those with a loss front by front (Deb et
 * al.'s non-dominated sorting, `core/front.ts`), within a front by hypervolume contribution (largest
 * first, against {@link referencePoint} of all of them), ties by lower trial id; then those without a
 * loss (diverged, failed, flagged, or pending under the constant liar) by trial id. A total order, so
 * the split depends only on the set of observations, never on their arrival order.
 */
export function orderByFronts<T extends TwoGoalObservation>(observations: readonly T[]): T[] {
  const scored = observations.filter(hasLoss).sort((a, b) => a.trialId - b.trialId);
  const unscored = observations.filter((o) => !hasLoss(o)).sort((a, b) => a.trialId - b.trialId);
  if (scored.length === 0) return unscored;
  const points = scored.map((o): [number, number] => [o.loss, o.second]);
  const reference = referencePoint(points);
  const ordered: T[] = [];
  for (const front of nonDominatedFronts(points)) {
    const contributions = hypervolumeContributions(front.map((i) => points[i]!), reference);
    const members = front.map((i, k) => ({ observation: scored[i]!, contribution: contributions[k]! }));
    members.sort((a, b) => b.contribution - a.contribution || a.observation.trialId - b.observation.trialId);
    ordered.push(...members.map((m) => m.observation));
  }
  return [...ordered, ...unscored];
}
