import { z } from 'zod';
import { halvingFields } from '../core/fields.js';
import { defineSampler, type Job, type JobOutcome, type Sampler } from './sampler.js';
import { bracketsPlan, EMPTY_PLAN } from './plan.js';
import type { ProposalOrigin } from '../core/trial.js';
import { HalvingBracket, checkHalvingBudget } from './successive-halving.js';
import type { RungPlan } from './plan.js';
import { assertEta, assertPositiveInteger, type ConfigurationForTrial } from './rungs.js';

/** One Hyperband bracket: its index s (s_max runs first) and its rounds of successive halving. */
export interface HyperbandBracketPlan {
  s: number;
  rounds: RungPlan[];
}

/**
 * s_max = floor(log_eta(maxEpochs / minEpochs)), by an integer loop: a floating logarithm gives
 * e.g. log(1000) / log(10) = 2.9999999999999996 and would lose a bracket.
 */
export function largestBracket(maxEpochs: number, minEpochs: number, eta: number): number {
  let s = 0;
  // Integers throughout: minEpochs * eta^(s + 1) <= maxEpochs is exact.
  for (let resource = minEpochs * eta; resource <= maxEpochs; resource *= eta) s++;
  return s;
}

/**
 * The Hyperband plan. The resource unit is minEpochs epochs, so R = maxEpochs / minEpochs units,
 * s_max = floor(log_eta R), B = (s_max + 1) R. Bracket s = s_max .. 0 starts n = ceil((B / R) eta^s / (s + 1))
 * configurations at r = R eta^-s units; round i has n_i = floor(n eta^-i) configurations at r_i = r eta^i units.
 * Source: Li et al., Hyperband, JMLR 18(185), 2018, Algorithm 1.
 *
 * B / R = s_max + 1 exactly, so n is computed in integers. Epochs of round i are
 * maxEpochs * eta^(i - s) rounded to the nearest integer: when minEpochs does not divide maxEpochs the
 * paper's r_i are fractional. Rounding keeps every round at least minEpochs (r_0 >= 1 unit) and strictly
 * above the previous one (consecutive rounds differ by a factor eta >= 2 on values >= 1); the last round
 * of every bracket is exactly maxEpochs.
 */
export function hyperbandSchedule(maxEpochs: number, eta: number, minEpochs = 1): HyperbandBracketPlan[] {
  assertPositiveInteger('maxEpochs', maxEpochs);
  assertPositiveInteger('minEpochs', minEpochs);
  assertEta(eta);
  if (minEpochs > maxEpochs) throw new RangeError(`minEpochs (${minEpochs}) must not exceed maxEpochs (${maxEpochs})`);
  const sMax = largestBracket(maxEpochs, minEpochs, eta);
  const brackets: HyperbandBracketPlan[] = [];
  for (let s = sMax; s >= 0; s--) {
    const etaToS = eta ** s;
    const n = Math.ceil(((sMax + 1) * etaToS) / (s + 1));
    const rounds: RungPlan[] = [];
    for (let i = 0; i <= s; i++) {
      const etaToI = eta ** i;
      rounds.push({
        configurations: Math.floor(n / etaToI),
        epochs: Math.round((maxEpochs * etaToI) / etaToS),
      });
    }
    brackets.push({ s, rounds });
  }
  return brackets;
}

/**
 * The brackets Hyperband runs for `trials` configurations, in order: s_max .. 0, then again (a second
 * pass, a third, ...) until `trials` configurations have started; the bracket that would pass the count
 * is shrunk to the configurations left (its rounds keep their epochs, and each keeps the best 1/eta of
 * the round before, at least one). At most `maxPasses` passes. So `budget.trials` is honoured exactly:
 * fewer configurations than one pass give fewer (and a last smaller) bracket, more give more passes.
 * Common practice (no source): the paper repeats whole passes; cutting the last bracket is this tool's rule.
 */
export function hyperbandBrackets(maxEpochs: number, eta: number, minEpochs: number, trials: number, maxPasses = Infinity): HyperbandBracketPlan[] {
  assertPositiveInteger('trials', trials);
  const pass = hyperbandSchedule(maxEpochs, eta, minEpochs);
  const brackets: HyperbandBracketPlan[] = [];
  let left = trials;
  for (let passes = 0; left > 0 && passes < maxPasses; passes++) {
    for (const bracket of pass) {
      if (left === 0) break;
      const n = Math.min(left, bracket.rounds[0]!.configurations);
      left -= n;
      brackets.push(n === bracket.rounds[0]!.configurations ? bracket : { s: bracket.s, rounds: shrunkRounds(bracket.rounds, n, eta) });
    }
  }
  return brackets;
}

/** A bracket's rounds started with n configurations instead: the same epochs, max(1, floor(n_(i-1) / eta)) in round i. */
function shrunkRounds(rounds: readonly RungPlan[], n: number, eta: number): RungPlan[] {
  let configurations = n;
  return rounds.map((round, i) => {
    if (i > 0) configurations = Math.max(1, Math.floor(configurations / eta));
    return { configurations, epochs: round.epochs };
  });
}

/** Configurations one pass of Hyperband's brackets starts. */
export function configurationsPerPass(maxEpochs: number, eta: number, minEpochs: number): number {
  return hyperbandSchedule(maxEpochs, eta, minEpochs).reduce((sum, bracket) => sum + bracket.rounds[0]!.configurations, 0);
}

/** Sum of configurations times epochs over the rounds: the paper's budget, counting each round from scratch. */
export function scheduledEpochs(rounds: readonly RungPlan[]): number {
  return rounds.reduce((sum, round) => sum + round.configurations * round.epochs, 0);
}

export interface HyperbandOptions {
  maxEpochs: number;
  /** Epochs of one resource unit (the shortest round). */
  minEpochs: number;
  eta: number;
  configurationFor: ConfigurationForTrial;
  /**
   * Let later brackets hand out jobs while an earlier one waits for its rung to fill. Decisions stay
   * deterministic either way: each bracket ranks only its own rung's results.
   * @default true
   */
  overlapBrackets?: boolean;
  /** Times the whole list of brackets s_max .. 0 runs, one pass after another (when `trials` is not given). @default 1 */
  iterations?: number;
  /**
   * Configurations to start: the brackets are cut to this count (see {@link hyperbandBrackets}), at
   * most `iterations` passes when that is given too. @default every configuration of `iterations` passes
   */
  trials?: number;
  /**
   * Whether the bracket at this position (0 for the first of all passes) may hand out its first job;
   * while false it and every later bracket wait. For samplers whose proposals for a bracket depend on
   * earlier brackets' results. @default always
   */
  mayStartBracket?: (index: number) => boolean;
  /** Recorded with each trial's first job, for samplers that propose configurations themselves. */
  originFor?: (trialId: number) => ProposalOrigin;
}

/** The brackets a {@link HyperbandSampler} with these options runs, in order. */
export function hyperbandPlanOf(options: Pick<HyperbandOptions, 'maxEpochs' | 'minEpochs' | 'eta' | 'iterations' | 'trials'>): HyperbandBracketPlan[] {
  const iterations = options.iterations ?? (options.trials === undefined ? 1 : Infinity);
  if (Number.isFinite(iterations)) assertPositiveInteger('iterations', iterations);
  const perPass = configurationsPerPass(options.maxEpochs, options.eta, options.minEpochs);
  const trials = options.trials ?? perPass * iterations;
  return hyperbandBrackets(options.maxEpochs, options.eta, options.minEpochs, trials, iterations);
}

/**
 * Hyperband: brackets s_max .. 0 of successive halving, one after another. Trial ids run across brackets
 * (bracket s_max owns 0 .. n - 1, the next the following ids, and so on); `Job.bracket` is s.
 */
export class HyperbandSampler implements Sampler {
  private readonly brackets: HalvingBracket[] = [];
  private readonly started = new Set<number>();
  private readonly overlap: boolean;

  constructor(private readonly options: HyperbandOptions) {
    this.overlap = options.overlapBrackets ?? true;
    let firstTrialId = 0;
    const { configurationFor, originFor } = options;
    for (const plan of hyperbandPlanOf(options)) {
      this.brackets.push(new HalvingBracket({ plan: plan.rounds, firstTrialId, bracket: plan.s, configurationFor, ...(originFor ? { originFor } : {}) }));
      firstTrialId += plan.rounds[0]!.configurations;
    }
  }

  /** Position (over all passes) of the bracket that owns a trial. */
  bracketIndexOf(trialId: number): number {
    const index = this.brackets.findIndex((candidate) => candidate.ownsTrial(trialId));
    if (index < 0) throw new Error(`hyperband: trial ${trialId} belongs to no bracket`);
    return index;
  }

  /** Whether the bracket at this position has run all its rounds. */
  isBracketFinished(index: number): boolean {
    return this.brackets[index]?.isFinished ?? false;
  }

  next(): Job | 'wait' | 'done' {
    let waiting = false;
    for (const [index, bracket] of this.brackets.entries()) {
      if (!this.started.has(index)) {
        if (this.options.mayStartBracket && !this.options.mayStartBracket(index)) return 'wait';
        this.started.add(index);
      }
      const job = bracket.next();
      if (job === 'done') continue;
      if (job !== 'wait') return job;
      waiting = true;
      if (!this.overlap) return 'wait';
    }
    return waiting ? 'wait' : 'done';
  }

  report(outcome: JobOutcome): void {
    this.bracketOf(outcome.trialId).report(outcome);
  }

  mayContinue(trialId: number): boolean {
    return this.brackets.some((bracket) => bracket.ownsTrial(trialId) && bracket.mayContinue(trialId));
  }

  private bracketOf(trialId: number): HalvingBracket {
    return this.brackets[this.bracketIndexOf(trialId)]!;
  }
}

/** `sampler.kind: "hyperband"`: brackets of successive halving from minEpochs to maxEpochs; derives its own trial count. */
export const hyperbandPlugin = defineSampler({
  kind: 'hyperband',
  summary: 'brackets of successive halving that trade many short trials against few long ones (Li et al. 2018); repeated or cut to budget.trials configurations',
  schema: z.strictObject({ kind: z.literal('hyperband'), ...halvingFields }),
  traits: { deterministic: true, stopsAtRungs: true, trialsFromBudget: true },
  create: (options, context) => {
    checkHalvingBudget(options, context.budget);
    return new HyperbandSampler({ ...options, maxEpochs: context.budget.maxEpochs, trials: context.budget.trials, configurationFor: context.randomConfiguration });
  },
  plan: (options, budget) => {
    if (options.minEpochs > budget.maxEpochs) return EMPTY_PLAN;
    return bracketsPlan(hyperbandBrackets(budget.maxEpochs, options.eta, options.minEpochs, budget.trials).map((bracket) => bracket.rounds));
  },
});
