import { z } from 'zod';
import { halvingFields } from '../core/fields.js';
import { defineSampler, type Job, type JobOutcome, type Sampler } from './sampler.js';
import { bracketsPlan, EMPTY_PLAN } from './plan.js';
import type { ProposalOrigin } from '../core/trial.js';
import { HalvingBracket, checkHalvingBudget } from './successive-halving.js';
import type { RungPlan } from './plan.js';
import { assertEta, assertPositiveInteger, type ParamsForTrial } from './rungs.js';

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

/** Sum of configurations times epochs over the rounds: the paper's budget, counting each round from scratch. */
export function scheduledEpochs(rounds: readonly RungPlan[]): number {
  return rounds.reduce((sum, round) => sum + round.configurations * round.epochs, 0);
}

export interface HyperbandOptions {
  maxEpochs: number;
  /** Epochs of one resource unit (the shortest round). */
  minEpochs: number;
  eta: number;
  paramsFor: ParamsForTrial;
  /**
   * Let later brackets hand out jobs while an earlier one waits for its rung to fill. Decisions stay
   * deterministic either way: each bracket ranks only its own rung's results.
   * @default true
   */
  overlapBrackets?: boolean;
  /** Times the whole list of brackets s_max .. 0 runs, one pass after another. @default 1 */
  iterations?: number;
  /**
   * Whether the bracket at this position (0 for the first of all passes) may hand out its first job;
   * while false it and every later bracket wait. For samplers whose proposals for a bracket depend on
   * earlier brackets' results. @default always
   */
  mayStartBracket?: (index: number) => boolean;
  /** Recorded with each trial's first job, for samplers that propose configurations themselves. */
  originFor?: (trialId: number) => ProposalOrigin;
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
    const iterations = options.iterations ?? 1;
    assertPositiveInteger('iterations', iterations);
    let firstTrialId = 0;
    const schedule = hyperbandSchedule(options.maxEpochs, options.eta, options.minEpochs);
    for (let pass = 0; pass < iterations; pass++) {
      for (const plan of schedule) {
        const { paramsFor, originFor } = options;
        this.brackets.push(new HalvingBracket({ plan: plan.rounds, firstTrialId, bracket: plan.s, paramsFor, ...(originFor ? { originFor } : {}) }));
        firstTrialId += plan.rounds[0]!.configurations;
      }
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
  summary: 'brackets of successive halving that trade many short trials against few long ones (Li et al. 2018); ignores budget.trials',
  schema: z.strictObject({ kind: z.literal('hyperband'), ...halvingFields }),
  traits: { deterministic: true, stopsAtRungs: true, trialsFromBudget: false },
  create: (options, context) => {
    checkHalvingBudget(options, context.budget);
    return new HyperbandSampler({ ...options, maxEpochs: context.budget.maxEpochs, paramsFor: context.randomParams });
  },
  plan: (options, budget) => {
    if (options.minEpochs > budget.maxEpochs) return EMPTY_PLAN;
    return bracketsPlan(hyperbandSchedule(budget.maxEpochs, options.eta, options.minEpochs).map((bracket) => bracket.rounds));
  },
});
