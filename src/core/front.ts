/**
 * The front of a study with a second goal: the configurations no other beats on both the score and
 * the second goal (weights or time per row). An extra listing beside the one ranking, never a second
 * ordering of trials. Non-dominated sorting as in Deb, Pratap, Agarwal and Meyarivan, "A Fast and
 * Elitist Multiobjective Genetic Algorithm: NSGA-II", IEEE Transactions on Evolutionary Computation
 * 6(2), 2002, section III-A.
 */
import type { Goal } from './configuration.js';
import { isFinished, isHealthy, type RankedTrial } from './ranking.js';
import type { TrialRecord } from './trial.js';

/** What a study may weigh its score against: the network's weight count, or its measured time per row. */
export const SECOND_GOALS = ['weights', 'time'] as const;
export type SecondGoal = (typeof SECOND_GOALS)[number];

/** True when `a` dominates `b`: no worse in every objective (all minimised) and better in at least one. */
export function dominates(a: readonly number[], b: readonly number[]): boolean {
  let better = false;
  for (let i = 0; i < a.length; i++) {
    if (a[i]! > b[i]!) return false;
    if (a[i]! < b[i]!) better = true;
  }
  return better;
}

/**
 * The fronts of points whose objectives are all minimised, best front first, each a list of point
 * indices in ascending order: Deb et al.'s fast non-dominated sort (each point's domination count
 * and the set it dominates; front 1 holds the points of count 0; removing a front lowers the counts
 * of the points it dominates, and those reaching 0 form the next front).
 */
export function nonDominatedFronts(points: readonly (readonly number[])[]): number[][] {
  const dominatedBy = points.map(() => 0);
  const dominatesSet = points.map((): number[] => []);
  for (let p = 0; p < points.length; p++) {
    for (let q = 0; q < points.length; q++) {
      if (dominates(points[p]!, points[q]!)) dominatesSet[p]!.push(q);
      else if (dominates(points[q]!, points[p]!)) dominatedBy[p]!++;
    }
  }
  const fronts: number[][] = [];
  let current = points.map((_, i) => i).filter((i) => dominatedBy[i] === 0);
  while (current.length > 0) {
    fronts.push(current);
    const next: number[] = [];
    for (const p of current) for (const q of dominatesSet[p]!) if (--dominatedBy[q]! === 0) next.push(q);
    current = next.sort((a, b) => a - b);
  }
  return fronts;
}

/** A trial's value of the second goal (smaller is better), or undefined when it was not recorded. */
export function secondValue(trial: Pick<TrialRecord, 'weightCount' | 'rowMicroseconds'>, against: SecondGoal): number | undefined {
  return against === 'weights' ? trial.weightCount : trial.rowMicroseconds;
}

/** One configuration of the front: its place on it (1 = the smallest or fastest), its rank in the one ranking, and its second-goal value. */
export interface FrontMember {
  place: number;
  ranked: RankedTrial;
  value: number;
}

/**
 * The front of the ranking: among the finished, unflagged trials with a recorded second value, those
 * no other beats on both the score and the second goal, smallest (or fastest) first. Equal points are
 * all on the front.
 */
export function frontOf(ranking: readonly RankedTrial[], goal: Pick<Goal, 'better'>, against: SecondGoal): FrontMember[] {
  const eligible = ranking.filter(({ trial }) => isFinished(trial) && isHealthy(trial) && secondValue(trial, against) !== undefined);
  const sign = goal.better === 'higher' ? -1 : 1;
  const points = eligible.map(({ trial }) => [sign * trial.score, secondValue(trial, against)!]);
  const first = nonDominatedFronts(points)[0] ?? [];
  return first
    .map((i) => ({ ranked: eligible[i]!, value: points[i]![1]! }))
    .sort((a, b) => a.value - b.value || a.ranked.rank - b.ranked.rank)
    .map((member, index) => ({ place: index + 1, ...member }));
}
