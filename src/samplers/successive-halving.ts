import { z } from 'zod';
import { UserError } from '../core/errors.js';
import { halvingFields } from '../core/fields.js';
import { defineSampler, type Job, type JobOutcome, type Sampler } from './sampler.js';
import { bracketsPlan, EMPTY_PLAN, type RungPlan } from './plan.js';
import type { ProposalOrigin } from '../core/trial.js';
import { assertEta, assertPositiveInteger, isPromotable, rank, resultsOf, rungEpochs, type ConfigurationForTrial } from './rungs.js';

/**
 * The successive-halving plan for n configurations starting at r epochs, with at most R epochs:
 * rung k trains max(1, floor(n_{k-1} / eta)) configurations to min(r * eta^k, R) epochs, and the
 * last rung is the first one that reaches R.
 * Source: Jamieson, Talwalkar, AISTATS 2016 (as restated in Li et al., Hyperband, JMLR 2018), eta in place of 2.
 */
export function halvingSchedule(n: number, r: number, R: number, eta: number): RungPlan[] {
  assertPositiveInteger('n', n);
  const epochs = rungEpochs(Math.min(r, R), R, eta);
  let configurations = n;
  return epochs.map((rungEpochs, k) => {
    if (k > 0) configurations = Math.max(1, Math.floor(configurations / eta));
    return { configurations, epochs: rungEpochs };
  });
}

export interface HalvingBracketOptions {
  /** The rungs to run; rung k + 1 keeps the best `plan[k + 1].configurations` of rung k. */
  plan: readonly RungPlan[];
  /** Trial ids of this bracket are firstTrialId .. firstTrialId + plan[0].configurations - 1. */
  firstTrialId: number;
  /** Written into every job. */
  bracket: number;
  configurationFor: ConfigurationForTrial;
  /** Recorded with each trial's rung-0 job, for samplers that propose configurations themselves. */
  originFor?: (trialId: number) => ProposalOrigin;
}

/**
 * Synchronous successive halving over one fixed plan: hands out a rung's jobs, waits until every
 * result of the rung is in, then promotes the best. Decisions depend only on the set of results
 * (ties go to the lower trial id), so they are the same with one worker or many.
 * Diverged or failed trials (null loss) are never promoted, so a rung may keep fewer than planned.
 * A trial early stopping ended (`stopped`) is ranked at its best epoch's score but never promoted:
 * the next best takes its place.
 */
export class HalvingBracket implements Sampler {
  private rung = 0;
  /** Trials of the current rung, in hand-out order (ids for rung 0, best first afterwards). */
  private members: number[];
  private handedOut = 0;
  private readonly results = new Map<number, number | null>();
  /** Trials early stopping ended in the current rung: ranked with the rest, never promoted. */
  private readonly stopped = new Set<number>();
  private finished = false;

  constructor(private readonly options: HalvingBracketOptions) {
    const first = options.plan[0];
    if (!first) throw new RangeError('a halving plan needs at least one rung');
    this.members = Array.from({ length: first.configurations }, (_, i) => options.firstTrialId + i);
  }

  /** Trial ids this bracket owns. */
  ownsTrial(trialId: number): boolean {
    const first = this.options.plan[0]!.configurations;
    return trialId >= this.options.firstTrialId && trialId < this.options.firstTrialId + first;
  }

  get isFinished(): boolean {
    return this.finished;
  }

  next(): Job | 'wait' | 'done' {
    if (this.finished) return 'done';
    const trialId = this.members[this.handedOut];
    if (trialId === undefined) return 'wait';
    this.handedOut++;
    const { plan, bracket, configurationFor, originFor } = this.options;
    const job: Job = {
      trialId,
      configuration: configurationFor(trialId),
      rung: this.rung,
      bracket,
      fromEpoch: this.rung === 0 ? 0 : plan[this.rung - 1]!.epochs,
      toEpoch: plan[this.rung]!.epochs,
    };
    if (this.rung === 0 && originFor) job.origin = originFor(trialId);
    return job;
  }

  report(outcome: JobOutcome): void {
    const inRung = this.members.indexOf(outcome.trialId);
    if (this.finished || outcome.rung !== this.rung || inRung < 0 || inRung >= this.handedOut || this.results.has(outcome.trialId)) {
      throw new Error(`successive halving: no outstanding job for trial ${outcome.trialId} at rung ${outcome.rung}`);
    }
    this.results.set(outcome.trialId, outcome.loss);
    if (outcome.stopped) this.stopped.add(outcome.trialId);
    if (this.results.size === this.members.length) this.closeRung();
  }

  /**
   * True while a job may still continue the trial: it is promoted into the current rung and its job
   * is not handed out yet (also in the last rung), or its job in a rung below the last is running or
   * reported with a result that can be promoted.
   */
  mayContinue(trialId: number): boolean {
    if (this.finished) return false;
    const index = this.members.indexOf(trialId);
    if (index < 0) return false;
    if (index >= this.handedOut) return this.rung > 0;
    if (this.rung === this.options.plan.length - 1) return false;
    // Not yet reported (undefined) may still win; a diverged result, or a trial early stopping ended, never will.
    return !this.results.has(trialId) || (isPromotable(this.results.get(trialId)!) && !this.stopped.has(trialId));
  }

  /** Invariant: called once per rung, when every member has reported. */
  private closeRung(): void {
    const nextPlan = this.options.plan[this.rung + 1];
    const promoted = nextPlan
      ? rank(resultsOf(this.results))
          .filter((result) => isPromotable(result.loss) && !this.stopped.has(result.trialId))
          .slice(0, nextPlan.configurations)
          .map((result) => result.trialId)
      : [];
    this.results.clear();
    this.stopped.clear();
    this.handedOut = 0;
    if (promoted.length === 0) {
      this.finished = true;
      this.members = [];
      return;
    }
    this.rung++;
    this.members = promoted;
  }
}

export interface SuccessiveHalvingOptions {
  /** Configurations in the first rung (trial ids 0 .. trials - 1). */
  trials: number;
  /** Epochs of the first rung. */
  minEpochs: number;
  /** Epochs of the last rung. */
  maxEpochs: number;
  eta: number;
  configurationFor: ConfigurationForTrial;
}

/** Successive halving of `trials` configurations from minEpochs up to maxEpochs; see {@link HalvingBracket}. */
export class SuccessiveHalvingSampler extends HalvingBracket {
  constructor(options: SuccessiveHalvingOptions) {
    assertEta(options.eta);
    super({
      plan: halvingSchedule(options.trials, options.minEpochs, options.maxEpochs, options.eta),
      firstTrialId: 0,
      bracket: 0,
      configurationFor: options.configurationFor,
    });
  }
}

/** The cross-field rule of every halving sampler: its first rung cannot train more than the budget allows. */
export function checkHalvingBudget(options: { minEpochs: number }, budget: { maxEpochs: number }): void {
  if (options.minEpochs > budget.maxEpochs) {
    throw new UserError(
      'E_STUDY_INVALID',
      `study definition: sampler.minEpochs is ${options.minEpochs} but budget.maxEpochs is ${budget.maxEpochs}; minEpochs must not exceed maxEpochs`,
    );
  }
}

/** `sampler.kind: "successive-halving"`: one bracket of synchronous halving over `budget.trials` configurations. */
export const successiveHalvingPlugin = defineSampler({
  kind: 'successive-halving',
  summary: 'budget.trials configurations from minEpochs; the best 1/eta of each full rung go on (Jamieson and Talwalkar 2016)',
  schema: z.strictObject({ kind: z.literal('successive-halving'), ...halvingFields }),
  traits: { deterministic: true, stopsAtRungs: true, trialsFromBudget: true },
  create: (options, context) => {
    checkHalvingBudget(options, context.budget);
    return new SuccessiveHalvingSampler({ ...options, trials: context.budget.trials, maxEpochs: context.budget.maxEpochs, configurationFor: context.randomConfiguration });
  },
  plan: (options, budget) => {
    if (options.minEpochs > budget.maxEpochs) return EMPTY_PLAN;
    return bracketsPlan([halvingSchedule(budget.trials, options.minEpochs, budget.maxEpochs, options.eta)]);
  },
});
