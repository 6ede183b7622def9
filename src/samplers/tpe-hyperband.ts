import { z } from 'zod';
import type { Rng } from '../random/streams.js';
import { snap } from '../space/dimensions.js';
import { halvingFields } from '../core/fields.js';
import { spaceDesign, type UnitDesign } from './design.js';
import { HyperbandSampler, configurationsPerPass, hyperbandBrackets } from './hyperband.js';
import { defineSampler, type Job, type JobOutcome, type Sampler } from './sampler.js';
import { bracketsPlan, EMPTY_PLAN } from './plan.js';
import type { ProposalOrigin } from '../core/trial.js';
import type { TrialConfiguration } from '../core/configuration.js';
import { checkHalvingBudget } from './successive-halving.js';
import { TpeModel, modelFields, type Observation, type TpeModelSettings } from './tpe-model.js';

export interface TpeHyperbandOptions {
  maxEpochs: number;
  minEpochs: number;
  eta: number;
  /** Passes over Hyperband's brackets at most. */
  iterations: number;
  /** Configurations to start (`budget.trials`): the brackets are cut to this count. @default every configuration of `iterations` passes */
  trials?: number;
  design: UnitDesign;
  model: TpeModelSettings;
  /** Share of new configurations drawn at random whatever the model says. */
  randomShare: number;
  /** N_min: a budget's model needs at least smallestGroup + 2 results there, and each group has at least smallestGroup. */
  smallestGroup: number;
  /**
   * true: bracket k is fitted on brackets 0 .. k - 2 and may run beside bracket k - 1;
   * false: on brackets 0 .. k - 1, and starts when they have finished.
   */
  overlapBrackets: boolean;
  /** Seeded streams keyed per trial, e.g. `(purpose, trialId) => context.stream(purpose, trialId)`. */
  stream: (purpose: string, trialId: number) => Rng;
  /** With a second goal: a configuration's value of it (smaller better); each budget's split then follows both goals (`two-goals.ts`). */
  secondGoal?: (configuration: TrialConfiguration) => number;
}

interface Proposal {
  point: number[];
  origin: ProposalOrigin;
  /** The configuration's second-goal value, with a second goal. */
  second?: number;
}

/**
 * TPE inside Hyperband: Hyperband's brackets (see {@link HyperbandSampler}), and each new configuration
 * proposed by a TPE model fitted on the results at the largest budget (epochs) that has at least
 * smallestGroup + 2 of them, or drawn at random with probability randomShare or when no budget has
 * enough results. Promotions continue from checkpoints as in Hyperband.
 * Source: Falkner, Klein, Hutter, "BOHB: Robust and Efficient Hyperparameter Optimization at Scale",
 * ICML 2018, Algorithm 2 (N_min = d + 1, |D_b| >= N_min + 2, rho = 1/3; From memory). BOHB fits one
 * multivariate kernel density; this fits the product of one-dimensional ones, as TPE does. With a
 * second goal, each budget's good group is chosen by both goals (Ozaki et al. 2020, see `two-goals.ts`).
 *
 * Deterministic: the proposals of bracket k use only results of brackets that have finished before
 * bracket k may start (0 .. k - 2 with overlapBrackets, else 0 .. k - 1), so they do not depend on
 * worker count, arrival order or interruption.
 */
export class TpeHyperbandSampler implements Sampler {
  private readonly hyperband: HyperbandSampler;
  private readonly proposals = new Map<number, Proposal>();
  /** Epochs reached by each handed-out (trial, rung) job, to file its result under its budget. */
  private readonly jobEpochs = new Map<string, number>();
  /** Results by budget (epochs), with the bracket position they came from. */
  private readonly results = new Map<number, (Observation & { bracketIndex: number })[]>();

  constructor(private readonly options: TpeHyperbandOptions) {
    const lag = options.overlapBrackets ? 1 : 0;
    this.hyperband = new HyperbandSampler({
      maxEpochs: options.maxEpochs,
      minEpochs: options.minEpochs,
      eta: options.eta,
      iterations: options.iterations,
      ...(options.trials !== undefined ? { trials: options.trials } : {}),
      overlapBrackets: true,
      configurationFor: (trialId) => this.configurationOf(trialId),
      originFor: (trialId) => this.proposal(trialId).origin,
      mayStartBracket: (index) => {
        for (let earlier = 0; earlier < index - lag; earlier++) if (!this.hyperband.isBracketFinished(earlier)) return false;
        return true;
      },
    });
  }

  /** The unit-cube point trial `trialId` was given. */
  pointOf(trialId: number): readonly number[] | undefined {
    return this.proposals.get(trialId)?.point;
  }

  next(): Job | 'wait' | 'done' {
    const job = this.hyperband.next();
    if (typeof job !== 'string') this.jobEpochs.set(`${job.trialId}/${job.rung}`, job.toEpoch);
    return job;
  }

  report(outcome: JobOutcome): void {
    this.hyperband.report(outcome);
    const key = `${outcome.trialId}/${outcome.rung}`;
    const epochs = this.jobEpochs.get(key)!;
    this.jobEpochs.delete(key);
    const atBudget = this.results.get(epochs) ?? [];
    const { point, second } = this.proposals.get(outcome.trialId)!;
    atBudget.push({ trialId: outcome.trialId, point, loss: outcome.loss, bracketIndex: this.hyperband.bracketIndexOf(outcome.trialId), ...(second !== undefined ? { second } : {}) });
    this.results.set(epochs, atBudget);
  }

  mayContinue(trialId: number): boolean {
    return this.hyperband.mayContinue(trialId);
  }

  /** The configuration trial `trialId` trains: its listed one, or the one at its proposed point. */
  private configurationOf(trialId: number): TrialConfiguration {
    const { design, secondGoal } = this.options;
    const proposal = this.proposal(trialId);
    const configuration = design.listed?.(trialId)?.configuration ?? design.configurationAt(proposal.point);
    if (secondGoal) proposal.second ??= secondGoal(configuration);
    return configuration;
  }

  private proposal(trialId: number): Proposal {
    let proposal = this.proposals.get(trialId);
    if (!proposal) {
      proposal = this.propose(trialId);
      this.proposals.set(trialId, proposal);
    }
    return proposal;
  }

  private propose(trialId: number): Proposal {
    const { design, model, randomShare, smallestGroup, stream, overlapBrackets } = this.options;
    const bracketIndex = this.hyperband.bracketIndexOf(trialId);
    const listed = design.listed?.(trialId);
    if (listed) return { point: listed.point, origin: { method: 'listed', batch: bracketIndex } };
    const randomDraw = stream('random', trialId);
    const random = (): Proposal => ({ point: snap(design.dimensions, design.dimensions.map(() => randomDraw())), origin: { method: 'random', batch: bracketIndex } });
    if (randomDraw() < randomShare) return random();
    const visibleBefore = bracketIndex - (overlapBrackets ? 1 : 0);
    const budgets = [...this.results.keys()].sort((a, b) => b - a);
    for (const epochs of budgets) {
      const observations = this.results.get(epochs)!.filter((o) => o.bracketIndex < visibleBefore);
      if (observations.length < smallestGroup + 2) continue;
      const fitted = new TpeModel(design.dimensions, observations, { ...model, minimumGroup: smallestGroup });
      return { point: fitted.propose(stream('propose', trialId)).point, origin: { method: 'tpe', batch: bracketIndex, fittedOnEpochs: epochs } };
    }
    return random();
  }
}

/** Defaults of the `tpe-hyperband` kind's model options. Source: Falkner et al. 2018, section 4 / appendix (From memory). */
const BOHB_MODEL_DEFAULTS = { gamma: 0.15, drawsPerProposal: 64, bandwidth: 'scott', drawWidening: 3 } as const;

/** `sampler.kind: "tpe-hyperband"`: Hyperband's brackets with new configurations from a TPE model (BOHB). */
export const tpeHyperbandPlugin = defineSampler({
  kind: 'tpe-hyperband',
  summary: "Hyperband's brackets (cut to budget.trials configurations), new configurations from a TPE model on the largest budget with enough results (Falkner et al. 2018)",
  schema: z.strictObject({
    kind: z.literal('tpe-hyperband'),
    ...halvingFields,
    iterations: z.int().min(1).max(100).default(1).describe("Passes over Hyperband's brackets at most; budget.trials must fit in them."),
    randomShare: z.number().min(0).max(1).default(1 / 3).describe('Share of new configurations drawn at random instead of from the model.'),
    smallestGroup: z.int().min(1).optional().describe('Fewest results in each of the good and the bad group (N_min); a budget needs this many plus 2 results before its model proposes; default: dimensions + 1.'),
    overlapBrackets: z.boolean().default(true).describe('Let a bracket run beside the previous one (its model then skips that bracket).'),
    ...modelFields(BOHB_MODEL_DEFAULTS),
  }),
  traits: { deterministic: true, stopsAtRungs: true, trialsFromBudget: true },
  create: (options, context) => {
    checkHalvingBudget(options, context.budget);
    const design = spaceDesign(context.space, context.tryFirst, context.narrow);
    return new TpeHyperbandSampler({
      maxEpochs: context.budget.maxEpochs,
      minEpochs: options.minEpochs,
      eta: options.eta,
      iterations: options.iterations,
      trials: context.budget.trials,
      design,
      model: options,
      randomShare: options.randomShare,
      smallestGroup: options.smallestGroup ?? design.dimensions.length + 1,
      overlapBrackets: options.overlapBrackets,
      stream: (purpose, trialId) => context.stream(purpose, trialId),
      ...(context.secondGoal ? { secondGoal: context.secondGoal } : {}),
    });
  },
  plan: (options, budget) => {
    if (options.minEpochs > budget.maxEpochs) return EMPTY_PLAN;
    return bracketsPlan(hyperbandBrackets(budget.maxEpochs, options.eta, options.minEpochs, budget.trials, options.iterations).map((bracket) => bracket.rounds));
  },
  budgetProblem: (options, budget) => {
    if (options.minEpochs > budget.maxEpochs) return undefined;
    const perPass = configurationsPerPass(budget.maxEpochs, options.eta, options.minEpochs);
    if (budget.trials <= perPass * options.iterations) return undefined;
    const passes = Math.ceil(budget.trials / perPass);
    return {
      field: 'budget.trials',
      message:
        `found ${budget.trials}, but ${options.iterations} pass${options.iterations === 1 ? '' : 'es'} (sampler.iterations) of Hyperband's brackets for maxEpochs ${budget.maxEpochs}, eta ${options.eta}, minEpochs ${options.minEpochs} start at most ${perPass * options.iterations} configurations; ` +
        `set budget.trials to at most ${perPass * options.iterations} or sampler.iterations to ${passes}`,
    };
  },
});
