import { z } from 'zod';
import { halvingFields } from '../core/fields.js';
import { checkHalvingBudget } from './successive-halving.js';
import { defineSampler, type Job, type JobOutcome, type Sampler } from './sampler.js';
import { bracketsPlan, EMPTY_PLAN, type RungPlan } from './plan.js';
import { assertPositiveInteger, isPromotable, rank, resultsOf, rungEpochs, type ConfigurationForTrial } from './rungs.js';

export interface AsyncHalvingOptions {
  /** Configurations to start (trial ids 0 .. trials - 1). */
  trials: number;
  /** Epochs of rung 0; rung k trains to minEpochs * eta^k, the top rung to maxEpochs. */
  minEpochs: number;
  maxEpochs: number;
  eta: number;
  configurationFor: ConfigurationForTrial;
  /**
   * The most trials promoted out of each rung (the plugin passes its plan's: the synchronous schedule's
   * n_(k+1) out of rung k), so the run never passes the planned jobs and epochs. A candidate that comes
   * after the rung's promotions are used up stays where it is for good. @default no cap
   */
  promotionsPerRung?: readonly number[];
}

/**
 * The asynchronous-halving plan: the synchronous schedule, floor(n_k / eta) of rung k going on. It is
 * the sampler's hard limit: asynchronous promotion could otherwise promote more (a trial promoted
 * early stays promoted when later results push it out of the top).
 */
export function asyncHalvingRounds(trials: number, minEpochs: number, maxEpochs: number, eta: number): RungPlan[] {
  let reaching = trials;
  return rungEpochs(Math.min(minEpochs, maxEpochs), maxEpochs, eta).map((epochs, k) => {
    if (k > 0) reaching = Math.floor(reaching / eta);
    return { configurations: reaching, epochs };
  });
}

/**
 * Asynchronous successive halving: promote whenever possible instead of waiting for a rung to complete.
 * Source: Li et al., "A System for Massively Parallel Hyperparameter Tuning", MLSys 2020, Algorithm 2.
 *
 * When asked for a job it scans rungs from the highest that can promote down to rung 0; the candidates
 * of rung k are its best floor(|rung k| / eta) results so far (ties: lower id); the first candidate not
 * yet promoted goes on. Otherwise a new configuration starts at rung 0, until `trials` have started.
 * Unlike the synchronous samplers its decisions depend on the order results arrive (by design).
 * Diverged or failed results (null loss) count in |rung k| but are never promoted; so do trials
 * early stopping ended (they keep their place among the top 1/eta, which is then passed over).
 * With `promotionsPerRung`, a rung whose promotions are used up promotes no more, so the jobs and
 * epochs handed out stay within the plan of the synchronous schedule.
 */
export class AsyncHalvingSampler implements Sampler {
  /** Epochs at the end of each rung. */
  readonly rungs: readonly number[];
  /** results[k]: trial id -> loss of every result reported at rung k. */
  private readonly results: Map<number, number | null>[];
  /** promoted[k]: trials promoted out of rung k. */
  private readonly promoted: Set<number>[];
  /** Trials early stopping ended: they keep their place in their rung's ranking but are never promoted. */
  private readonly stopped = new Set<number>();
  /** Trial id -> rung of its outstanding job (a trial has at most one). */
  private readonly outstanding = new Map<number, number>();
  private readonly reasons = new Map<string, string>();
  private started = 0;

  constructor(private readonly options: AsyncHalvingOptions) {
    assertPositiveInteger('trials', options.trials);
    this.rungs = rungEpochs(Math.min(options.minEpochs, options.maxEpochs), options.maxEpochs, options.eta);
    this.results = this.rungs.map(() => new Map());
    this.promoted = this.rungs.map(() => new Set());
  }

  next(): Job | 'wait' | 'done' {
    const promotion = this.findPromotion();
    if (promotion) {
      const { trialId, fromRung, reason } = promotion;
      this.promoted[fromRung]!.add(trialId);
      this.reasons.set(key(trialId, fromRung), reason);
      return this.handOut(trialId, fromRung + 1, reason);
    }
    if (this.started < this.options.trials) return this.handOut(this.started++, 0);
    return this.outstanding.size > 0 ? 'wait' : 'done';
  }

  report(outcome: JobOutcome): void {
    if (this.outstanding.get(outcome.trialId) !== outcome.rung) {
      throw new Error(`async halving: no outstanding job for trial ${outcome.trialId} at rung ${outcome.rung}`);
    }
    this.outstanding.delete(outcome.trialId);
    this.results[outcome.rung]!.set(outcome.trialId, outcome.loss);
    if (outcome.stopped) this.stopped.add(outcome.trialId);
  }

  /**
   * False only when the trial can never be promoted again: it reached the top rung, was already
   * promoted, diverged, or sits in a rung that can no longer change and is not a candidate of it.
   */
  mayContinue(trialId: number): boolean {
    const outstandingRung = this.outstanding.get(trialId);
    if (outstandingRung !== undefined) return outstandingRung < this.topRung;
    const rung = this.latestRung(trialId);
    if (rung === undefined || rung === this.topRung || this.promoted[rung]!.has(trialId) || this.stopped.has(trialId)) return false;
    // Promotions out of a rung only grow, so a rung whose promotions are used up stays so.
    if (!this.promotionFits(rung)) return false;
    if (!isPromotable(this.results[rung]!.get(trialId) ?? null)) return false;
    return this.mayGrow(rung) || this.candidates(rung).some((result) => result.trialId === trialId);
  }

  /** Why the trial was promoted out of `fromRung`, e.g. "rank 2 of 7 at rung 0 (top 2 promotable)". */
  promotionReason(trialId: number, fromRung: number): string | undefined {
    return this.reasons.get(key(trialId, fromRung));
  }

  private get topRung(): number {
    return this.rungs.length - 1;
  }

  private findPromotion(): { trialId: number; fromRung: number; reason: string } | undefined {
    for (let k = this.topRung - 1; k >= 0; k--) {
      if (!this.promotionFits(k)) continue;
      const size = this.results[k]!.size;
      const candidates = this.candidates(k);
      const index = candidates.findIndex((result) => isPromotable(result.loss) && !this.promoted[k]!.has(result.trialId) && !this.stopped.has(result.trialId));
      if (index >= 0) {
        const reason = `rank ${index + 1} of ${size} at rung ${k} (top ${candidates.length} promotable)`;
        return { trialId: candidates[index]!.trialId, fromRung: k, reason };
      }
    }
    return undefined;
  }

  /** The best floor(|rung k| / eta) results of rung k so far. */
  private candidates(k: number) {
    const results = this.results[k]!;
    return rank(resultsOf(results)).slice(0, Math.floor(results.size / this.options.eta));
  }

  /** Whether rung k may still receive results (so its candidate set may still change). */
  private mayGrow(k: number): boolean {
    for (const rung of this.outstanding.values()) if (rung === k) return true;
    if (k === 0) return this.started < this.options.trials;
    return this.mayGrow(k - 1) || this.candidates(k - 1).some((r) => isPromotable(r.loss) && !this.promoted[k - 1]!.has(r.trialId) && !this.stopped.has(r.trialId));
  }

  /** Whether rung k may still promote a trial (its promotions are not used up). */
  private promotionFits(k: number): boolean {
    const cap = this.options.promotionsPerRung?.[k];
    return cap === undefined || this.promoted[k]!.size < cap;
  }

  private latestRung(trialId: number): number | undefined {
    for (let k = this.topRung; k >= 0; k--) if (this.results[k]!.has(trialId)) return k;
    return undefined;
  }

  private handOut(trialId: number, rung: number, reason?: string): Job {
    this.outstanding.set(trialId, rung);
    const fromEpoch = rung === 0 ? 0 : this.rungs[rung - 1]!;
    const job: Job = {
      trialId,
      configuration: this.options.configurationFor(trialId),
      rung,
      bracket: 0,
      fromEpoch,
      toEpoch: this.rungs[rung]!,
    };
    if (reason !== undefined) job.reason = reason;
    return job;
  }
}

function key(trialId: number, rung: number): string {
  return `${trialId}/${rung}`;
}

/** `sampler.kind: "async-halving"`: promotes whenever a rung allows, never waits for a rung to fill. */
export const asyncHalvingPlugin = defineSampler({
  kind: 'async-halving',
  summary: 'promotes the top 1/eta of each rung as soon as results allow, so no worker waits (Li et al. 2020); order-dependent, never past its planned jobs and epochs',
  schema: z.strictObject({ kind: z.literal('async-halving'), ...halvingFields }),
  traits: { deterministic: false, stopsAtRungs: true, trialsFromBudget: true },
  create: (options, context) => {
    checkHalvingBudget(options, context.budget);
    const { trials, maxEpochs } = context.budget;
    const promotionsPerRung = asyncHalvingRounds(trials, options.minEpochs, maxEpochs, options.eta).slice(1).map((round) => round.configurations);
    return new AsyncHalvingSampler({ ...options, trials, maxEpochs, configurationFor: context.randomConfiguration, promotionsPerRung });
  },
  plan: (options, budget) => {
    if (options.minEpochs > budget.maxEpochs) return EMPTY_PLAN;
    return bracketsPlan([asyncHalvingRounds(budget.trials, options.minEpochs, budget.maxEpochs, options.eta)], true);
  },
});
