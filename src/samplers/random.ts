import { z } from 'zod';
import { seedField } from '../core/fields.js';
import { defineSampler, type Job, type JobOutcome, type Sampler } from './sampler.js';
import { oneJobEachPlan } from './plan.js';
import type { ProposalOrigin } from '../core/trial.js';
import { assertPositiveInteger, type ConfigurationForTrial } from './rungs.js';

export interface RandomSamplerOptions {
  /** Configurations to try; trial ids run 0 .. trials - 1. */
  trials: number;
  /** Every trial trains from scratch to this many epochs in one job. */
  maxEpochs: number;
  configurationFor: ConfigurationForTrial;
  /** Recorded with each trial's job (a design other than random drawing names itself here). */
  originFor?: (trialId: number) => ProposalOrigin;
}

/**
 * Random search: each trial is one job of maxEpochs epochs, handed out in id order.
 * Source: Bergstra, Bengio, "Random Search for Hyper-Parameter Optimization", JMLR 13, 2012.
 */
export class RandomSampler implements Sampler {
  private nextTrialId = 0;
  private readonly outstanding = new Set<number>();

  constructor(private readonly options: RandomSamplerOptions) {
    assertPositiveInteger('trials', options.trials);
    assertPositiveInteger('maxEpochs', options.maxEpochs);
  }

  next(): Job | 'done' {
    // 'done' once everything is handed out: the run loop waits for outstanding jobs itself.
    if (this.nextTrialId >= this.options.trials) return 'done';
    const trialId = this.nextTrialId++;
    this.outstanding.add(trialId);
    const job: Job = { trialId, configuration: this.options.configurationFor(trialId), rung: 0, bracket: 0, fromEpoch: 0, toEpoch: this.options.maxEpochs };
    if (this.options.originFor) job.origin = this.options.originFor(trialId);
    return job;
  }

  report(outcome: JobOutcome): void {
    if (outcome.rung !== 0 || !this.outstanding.delete(outcome.trialId)) {
      throw new Error(`random sampler: no outstanding job for trial ${outcome.trialId} at rung ${outcome.rung}`);
    }
  }

  /** Never: every trial trains to maxEpochs in its single job. */
  mayContinue(_trialId: number): boolean {
    return false;
  }
}

/** `sampler.kind: "random"`: every trial one job of maxEpochs, configurations drawn at random. */
export const randomPlugin = defineSampler({
  kind: 'random',
  summary: 'every trial trains maxEpochs; configurations drawn at random (Bergstra and Bengio 2012)',
  schema: z.strictObject({ kind: z.literal('random'), seed: seedField.default(0) }),
  traits: { deterministic: true, stopsAtRungs: false, trialsFromBudget: true },
  create: (_options, context) => new RandomSampler({ trials: context.budget.trials, maxEpochs: context.budget.maxEpochs, configurationFor: context.randomConfiguration }),
  plan: (_options, budget) => oneJobEachPlan(budget),
});
