import type { z } from 'zod';
import type { ProposalOrigin } from '../core/trial.js';
import type { SamplerPlan } from './plan.js';
import type { Rng } from '../random/streams.js';
import type { Budget } from '../core/budget.js';
import type { SearchSpace } from '../space/schema.js';
import type { TrialConfiguration } from '../core/configuration.js';

/** A unit of work: train one configuration from one epoch count to another. */
export interface Job {
  trialId: number;
  configuration: TrialConfiguration;
  /** Rung index within the trial's bracket (0 for the first; random search uses 0 only). */
  rung: number;
  /** Bracket index for Hyperband; 0 elsewhere. */
  bracket: number;
  fromEpoch: number;
  toEpoch: number;
  /** Why the trial was promoted into this rung, e.g. "rank 2 of 7 at rung 0 (top 2 promotable)". */
  reason?: string;
  /** Set on a trial's first job by samplers that propose configurations themselves. */
  origin?: ProposalOrigin;
}

/** What came of a job. */
export interface JobOutcome {
  trialId: number;
  rung: number;
  /** Objective at the job's last epoch (with early stopping: at the trial's best epoch), already oriented so that smaller is better; null when the trial diverged or failed. */
  loss: number | null;
  /** True when early stopping ended the trial in this job: it keeps its place in the rung's ranking but is never promoted. */
  stopped?: boolean;
}

/**
 * The one interface every sampler implements. The run loop asks {@link Sampler.next} whenever a worker
 * is free and reports every finished job; a sampler holds no timers and does no I/O.
 */
export interface Sampler {
  /** The next job, `'wait'` when nothing can start until a running job reports, or `'done'`. */
  next(): Job | 'wait' | 'done';
  /** Record a job's outcome. Outcomes of jobs handed out must each be reported once. */
  report(outcome: JobOutcome): void;
  /**
   * Whether a job may still continue this trial from its checkpoint (a promotion not yet handed out
   * counts): while true, its checkpoint is kept.
   */
  mayContinue(trialId: number): boolean;
}

/** What every sampler is given: the space to search, the budget, and its seeded random streams. */
export interface SamplerContext {
  space: SearchSpace;
  budget: Budget;
  /** The sampler's seed (`sampler.seed` in the study file). */
  seed: number;
  /** The configuration drawn at random for a trial id: the same for the same seed and id, in any order. */
  randomConfiguration(trialId: number): TrialConfiguration;
  /** Configurations the study lists to try first: trial k < tryFirst.length trains tryFirst[k] (randomConfiguration already gives it). */
  tryFirst?: readonly TrialConfiguration[];
  /**
   * A drawn configuration cut to the study's weight limit (`core/size.ts`'s `fitWeightLimit`); the
   * identity without a limit. `randomConfiguration` already applies it; samplers that propose points
   * apply it through `spaceDesign`, so a configuration over the limit is never proposed.
   */
  narrow?: (configuration: TrialConfiguration) => TrialConfiguration;
  /**
   * With a second goal (`footprint.against`): a configuration's value of it, smaller better and known
   * before training (`two-goals.ts`); TPE then splits its trials by both goals. Absent: one goal.
   */
  secondGoal?: (configuration: TrialConfiguration) => number;
  /** A seeded stream keyed by the sampler's seed and the given parts, e.g. `stream('tpe', batch)`. */
  stream(...key: (string | number)[]): Rng;
}

/** What a sampler promises, for the contract suite and the run loop. */
export interface SamplerTraits {
  /** The same jobs with 1 or N threads or workers and after an interruption at any job boundary. */
  deterministic: boolean;
  /** Stops trials at rungs and promotes the best (its trials' rung numbers mean something). */
  stopsAtRungs: boolean;
  /** Starts `budget.trials` configurations (every kind now does); false: derives its count from its brackets (from `budget.maxEpochs`). */
  trialsFromBudget: boolean;
}

/** The zod schema of one sampler kind's `sampler` object. */
export type SamplerSchema = z.ZodObject<z.core.$ZodShape, z.core.$ZodObjectConfig>;

/**
 * A kind of sampler, as registered in `samplers/registry.ts`. Its options schema sits beside its
 * implementation and is composed into the study schema and `schema/study.schema.json`.
 */
export interface SamplerPlugin<Schema extends SamplerSchema = SamplerSchema> {
  /** The `sampler.kind` value that selects it. */
  kind: string;
  /** One line for the README and `--help`. */
  summary: string;
  /** The `sampler` object for this kind: `kind: z.literal(kind)`, `seed`, and its options with defaults. */
  schema: Schema;
  traits: SamplerTraits;
  /** Build a fresh sampler. Throw a UserError for options that do not fit the budget. */
  create(options: z.output<Schema>, context: SamplerContext): Sampler;
  /**
   * Configurations, jobs and epochs the sampler runs, for progress and budget checks: exactly what it
   * runs (less only when trials diverge, fail or stop early), or, for a sampler whose decisions depend
   * on the order results arrive (`limit` in the plan), a hard limit it enforces itself.
   */
  plan(options: z.output<Schema>, budget: Budget): SamplerPlan;
  /** A budget the options cannot honour: the field to name and what is allowed (the study is refused, exit 2). */
  budgetProblem?(options: z.output<Schema>, budget: Budget): { field: string; message: string } | undefined;
}

/** Declare a sampler kind with its types checked against its schema. */
export function defineSampler<Schema extends SamplerSchema>(plugin: SamplerPlugin<Schema>): SamplerPlugin<Schema> {
  return plugin;
}
