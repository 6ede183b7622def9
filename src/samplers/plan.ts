/**
 * What a sampler plans for a budget, said by each sampler kind itself (`SamplerPlugin.plan`): the
 * progress display, the capacity check and the report read it and never ask which kind it is.
 */
import type { Budget } from '../core/budget.js';
import type { RepeatSettings } from '../core/repeats.js';

/** One rung of a plan: how many configurations train, and to how many epochs in all. */
export interface RungPlan {
  configurations: number;
  epochs: number;
}


export interface SamplerPlan {
  /** Configurations started. */
  trials: number;
  /** Epochs trained (a promoted trial continues from its checkpoint, so a rung adds only the difference). */
  epochs: number;
  /** Jobs: one per configuration and rung it trains through. */
  jobs: number;
  /** Rungs per bracket (1 for samplers that train each configuration in one job). */
  rungs: number;
  /** Brackets (Hyperband), else 1. */
  brackets: number;
  /**
   * False: the run is exactly this plan (synchronous samplers; less only when trials diverge, fail or
   * stop early). True: the plan is a hard limit the run stays within but may end under, because the
   * sampler's decisions depend on the order results arrive (asynchronous halving): no job starts that
   * would take the study past the planned jobs or epochs.
   */
  limit: boolean;
  /** Configurations trained to the top of their bracket (the epoch limit): the ones the repeat runs may take. @default trials */
  finishing?: number;
  /** The repeat runs after the search (src/core/repeats.ts), included in `jobs` and `epochs`; absent: none. */
  repeats?: RepeatPlan;
}

/** The repeat runs a plan includes: `configurations` x `seeds` jobs of at most `maxEpochs` each. */
export interface RepeatPlan {
  configurations: number;
  seeds: number;
  jobs: number;
  epochs: number;
}

/** The plan of options that do not fit the budget: nothing runs. */
export const EMPTY_PLAN: SamplerPlan = { trials: 0, epochs: 0, jobs: 0, rungs: 0, brackets: 0, limit: false };

/** Every configuration trains `maxEpochs` in one job (random, Sobol, TPE). */
export function oneJobEachPlan(budget: Budget): SamplerPlan {
  return { trials: budget.trials, epochs: budget.trials * budget.maxEpochs, jobs: budget.trials, rungs: 1, brackets: 1, limit: false };
}

/** Epochs trained when each promoted trial continues from its checkpoint (each rung adds only the difference). */
export function trainedEpochs(rounds: readonly RungPlan[]): number {
  return rounds.reduce((sum, round, i) => sum + round.configurations * (round.epochs - (i > 0 ? rounds[i - 1]!.epochs : 0)), 0);
}

/** The plan of brackets of successive halving, in the order they run (one bracket for plain successive halving). */
export function bracketsPlan(brackets: readonly (readonly RungPlan[])[], limit = false): SamplerPlan {
  const sum = (of: (rounds: readonly RungPlan[]) => number): number => brackets.reduce((total, rounds) => total + of(rounds), 0);
  return {
    trials: sum((rounds) => rounds[0]?.configurations ?? 0),
    epochs: sum(trainedEpochs),
    jobs: sum((rounds) => rounds.reduce((n, round) => n + round.configurations, 0)),
    rungs: Math.max(0, ...brackets.map((rounds) => rounds.length)),
    // Hyperband's bracket s has s + 1 rounds, so distinct lengths are distinct brackets (passes repeat them).
    brackets: new Set(brackets.map((rounds) => rounds.length)).size,
    limit,
    finishing: sum((rounds) => rounds.at(-1)?.configurations ?? 0),
  };
}

/**
 * The plan with the repeat runs after the search: the top `settings.top` configurations (at most those
 * the plan trains to the top of their bracket) each train `settings.seeds` more times for at most `maxEpochs` (their scored epochs:
 * fewer with early stopping). None without settings, with `top: 0`, or with folds (the fold scores serve).
 */
export function withRepeats(plan: SamplerPlan, settings: RepeatSettings | undefined, maxEpochs: number, folds: boolean): SamplerPlan {
  if (!settings || settings.top === 0 || folds || plan.trials === 0) return plan;
  const configurations = Math.min(settings.top, plan.finishing ?? plan.trials);
  if (configurations === 0) return plan;
  const jobs = configurations * settings.seeds;
  const epochs = jobs * maxEpochs;
  return { ...plan, jobs: plan.jobs + jobs, epochs: plan.epochs + epochs, repeats: { configurations, seeds: settings.seeds, jobs, epochs } };
}
