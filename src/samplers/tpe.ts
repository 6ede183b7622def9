import { z } from 'zod';
import type { Rng } from '../random/streams.js';
import { seedField } from '../core/fields.js';
import { sobolDesign, spaceDesign, type UnitDesign } from './design.js';
import { defineSampler, type Job, type JobOutcome, type Sampler } from './sampler.js';
import { oneJobEachPlan } from './plan.js';
import type { ProposalOrigin } from '../core/trial.js';
import type { TrialConfiguration } from '../core/configuration.js';
import { assertPositiveInteger } from './rungs.js';
import { TpeModel, modelFields, type Observation, type TpeModelSettings } from './tpe-model.js';

export interface TpeSamplerOptions {
  /** Configurations to try; trial ids run 0 .. trials - 1. */
  trials: number;
  /** Every trial trains from scratch to this many epochs in one job. */
  maxEpochs: number;
  design: UnitDesign;
  /** The start-up design: the point of trial k < trialsBeforeModel (a Sobol design in the `tpe` kind). */
  startupPoint: (trialId: number) => number[];
  trialsBeforeModel: number;
  /** Proposals per batch after the start-up batch. */
  batchSize: number;
  /** Propose whenever asked, with running trials as constant liars, instead of in batches. */
  asynchronous: boolean;
  model: TpeModelSettings;
  /** The seeded stream for one proposal, e.g. `(trialId) => context.stream('propose', trialId)`. */
  proposalStream: (trialId: number) => Rng;
  /** With a second goal: a configuration's value of it (smaller better); the split then follows both goals (`two-goals.ts`). */
  secondGoal?: (configuration: TrialConfiguration) => number;
}

/**
 * Tree-structured Parzen estimator search: each trial one job of maxEpochs. Trials 0 .. trialsBeforeModel - 1
 * (batch 0) come from the start-up design; then batches of batchSize proposals, each fitted on every
 * result of the earlier batches. A batch starts only when every earlier batch has reported ('wait'
 * until then), and within a batch proposal j also sees proposals 0 .. j - 1 as constant liars (loss
 * null: ranked worst), so the configurations do not depend on worker count or arrival order.
 * Asynchronous mode fits on whatever has reported when asked, with every running trial as a liar,
 * and keeps to the Sobol design until trialsBeforeModel results are in (so a few more than trialsBeforeModel
 * may come from it): no worker waits, but the configurations depend on timing.
 * With a second goal, the good group is chosen by both goals (Ozaki et al. 2020, see `two-goals.ts`);
 * a liar has no loss, so it is still ranked worst.
 * Source: Bergstra, Bardenet, Bengio, Kégl, NeurIPS 2011; constant liar: Ginsbourger, Le Riche, Carraro,
 * "Kriging is well-suited to parallelize optimization", 2010 (CL-max, the worst value; From memory).
 */
export class TpeSampler implements Sampler {
  private nextTrialId = 0;
  private readonly points: number[][] = [];
  /** Each handed-out trial's second-goal value, with a second goal. */
  private readonly seconds: number[] = [];
  private readonly losses = new Map<number, number | null>();
  private readonly outstanding = new Set<number>();

  constructor(private readonly options: TpeSamplerOptions) {
    assertPositiveInteger('trials', options.trials);
    assertPositiveInteger('maxEpochs', options.maxEpochs);
    assertPositiveInteger('trialsBeforeModel', options.trialsBeforeModel);
    assertPositiveInteger('batchSize', options.batchSize);
  }

  /** Batch of a trial: 0 for the start-up design, then 1, 2, ... of batchSize trials each. */
  batchOf(trialId: number): number {
    const { trialsBeforeModel, batchSize } = this.options;
    return trialId < trialsBeforeModel ? 0 : 1 + Math.floor((trialId - trialsBeforeModel) / batchSize);
  }

  /** The unit-cube point trial `trialId` was given (snapped to its integer and categorical cells). */
  pointOf(trialId: number): readonly number[] | undefined {
    return this.points[trialId];
  }

  next(): Job | 'wait' | 'done' {
    const trialId = this.nextTrialId;
    if (trialId >= this.options.trials) return 'done';
    const listed = this.options.design.listed?.(trialId);
    const proposal = listed
      ? { point: listed.point, origin: { method: 'listed', batch: this.batchOf(trialId) } }
      : this.options.asynchronous
        ? this.proposeNow(trialId)
        : this.proposeInBatch(trialId);
    if (proposal === 'wait') return 'wait';
    this.nextTrialId++;
    this.points[trialId] = proposal.point;
    this.outstanding.add(trialId);
    const configuration = listed?.configuration ?? this.options.design.configurationAt(proposal.point);
    if (this.options.secondGoal) this.seconds[trialId] = this.options.secondGoal(configuration);
    return {
      trialId,
      configuration,
      rung: 0,
      bracket: 0,
      fromEpoch: 0,
      toEpoch: this.options.maxEpochs,
      origin: proposal.origin,
    };
  }

  report(outcome: JobOutcome): void {
    if (outcome.rung !== 0 || !this.outstanding.delete(outcome.trialId)) {
      throw new Error(`tpe sampler: no outstanding job for trial ${outcome.trialId} at rung ${outcome.rung}`);
    }
    this.losses.set(outcome.trialId, outcome.loss);
  }

  /** Never: every trial trains to maxEpochs in its single job. */
  mayContinue(_trialId: number): boolean {
    return false;
  }

  private proposeInBatch(trialId: number): { point: number[]; origin: ProposalOrigin } | 'wait' {
    const batch = this.batchOf(trialId);
    if (batch === 0) return { point: this.options.startupPoint(trialId), origin: { method: 'sobol', batch } };
    const firstOfBatch = this.options.trialsBeforeModel + (batch - 1) * this.options.batchSize;
    for (let id = 0; id < firstOfBatch; id++) if (!this.losses.has(id)) return 'wait';
    const observations: Observation[] = [];
    for (let id = 0; id < trialId; id++) {
      // Earlier batches with their results; earlier proposals of this batch as liars, whether or not they have reported.
      observations.push(this.observation(id, id < firstOfBatch ? this.losses.get(id)! : null));
    }
    return { point: this.model(observations, trialId), origin: { method: 'tpe', batch } };
  }

  private proposeNow(trialId: number): { point: number[]; origin: ProposalOrigin } {
    if (this.losses.size < this.options.trialsBeforeModel) return { point: this.options.startupPoint(trialId), origin: { method: 'sobol' } };
    const observations: Observation[] = [];
    for (let id = 0; id < trialId; id++) {
      observations.push(this.observation(id, this.losses.has(id) ? this.losses.get(id)! : null));
    }
    return { point: this.model(observations, trialId), origin: { method: 'tpe' } };
  }

  private observation(trialId: number, loss: number | null): Observation {
    const second = this.seconds[trialId];
    return { trialId, point: this.points[trialId]!, loss, ...(second !== undefined ? { second } : {}) };
  }

  private model(observations: readonly Observation[], trialId: number): number[] {
    const { design, model, proposalStream } = this.options;
    return new TpeModel(design.dimensions, observations, model).propose(proposalStream(trialId)).point;
  }
}

/** Defaults of the `tpe` kind's model options (sources in the README's sampler table). */
const TPE_MODEL_DEFAULTS = { gamma: 0.25, drawsPerProposal: 24, bandwidth: 'neighbour-gap', drawWidening: 1 } as const;

/** `sampler.kind: "tpe"`: every trial one job of maxEpochs; configurations from a Sobol start, then the tree-structured Parzen estimator. */
export const tpePlugin = defineSampler({
  kind: 'tpe',
  summary: 'every trial trains maxEpochs; a Sobol start, then the tree-structured Parzen estimator in batches (Bergstra et al. 2011)',
  schema: z.strictObject({
    kind: z.literal('tpe'),
    seed: seedField.default(0),
    trialsBeforeModel: z.int().min(2).default(10).describe('Trials from the Sobol design before the model proposes.'),
    batchSize: z.int().min(1).default(4).describe('Proposals per batch, each batch fitted on the results of earlier ones; at least the number of threads (and queue workers) keeps them all busy.'),
    asynchronous: z.boolean().default(false).describe('Propose whenever a worker is free, running trials counted as worst (constant liar); runs may then differ.'),
    ...modelFields(TPE_MODEL_DEFAULTS),
  }),
  // In the default batch mode; `asynchronous: true` gives up this promise (see TpeSampler).
  traits: { deterministic: true, stopsAtRungs: false, trialsFromBudget: true },
  create: (options, context) => {
    const design = spaceDesign(context.space, context.tryFirst, context.narrow);
    return new TpeSampler({
      trials: context.budget.trials,
      maxEpochs: context.budget.maxEpochs,
      design,
      startupPoint: sobolDesign(design.dimensions, 'shift', context.stream('design')),
      trialsBeforeModel: options.trialsBeforeModel,
      batchSize: options.batchSize,
      asynchronous: options.asynchronous,
      model: options,
      proposalStream: (trialId) => context.stream('propose', trialId),
      ...(context.secondGoal ? { secondGoal: context.secondGoal } : {}),
    });
  },
  plan: (_options, budget) => oneJobEachPlan(budget),
});
