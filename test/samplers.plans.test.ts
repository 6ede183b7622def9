/**
 * Every sampler runs what it plans: over many random budgets, with 1 and 4 threads, the jobs,
 * epochs and configurations a sampler hands out equal its plan (synchronous samplers), or stay
 * within it (asynchronous halving, whose plan is a hard limit). A loss function stands in for training.
 */
import { describe, expect, it } from 'vitest';
import seedrandom from 'seedrandom';
import { createSampler, plannedBudget, samplerBudgetProblem, SAMPLER_PLUGINS, simulate, type Job } from '../src/samplers/index.js';
import { configurationsPerPass, hyperbandBrackets, hyperbandSchedule } from '../src/samplers/hyperband.js';
import { budgetSchema } from '../src/core/budget.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { spaceSchema } from '../src/space/schema.js';
import type { StudyDefinition } from '../src/study/definition.js';

const space = spaceSchema.parse({
  depth: { min: 1, max: 3 },
  width: { min: 4, max: 64, log: true },
  activation: ['relu', 'tanh'],
  learningRate: { min: 1e-4, max: 0.3 },
  batchSize: [16, 32],
  optimizer: ['sgd', 'adam'],
});

/** Better near learning rate 0.01 and with more epochs; never diverges, so nothing drops out of a rung. */
const loss = (job: Job): number => Math.abs(Math.log10(job.configuration.learningRate) + 2) + 1 / Math.sqrt(job.configuration.width) + 1 / job.toEpoch;
/** Some configurations diverge past epoch 3: a rung then keeps fewer than planned. */
const lossWithDivergence = (job: Job): number | null => (job.configuration.learningRate > 0.2 && job.toEpoch > 3 ? null : loss(job));
/** Uneven job lengths, so results arrive out of order with 4 threads. */
const uneven = (job: Job): number => (job.toEpoch - job.fromEpoch) * (1 + ((job.trialId * 7) % 5));

type Definition = Pick<StudyDefinition, 'space' | 'budget' | 'sampler'>;

/** The sampler kinds, plus asynchronous TPE (an option of the `tpe` kind). */
const CASES: { name: string; sampler: Record<string, unknown> }[] = [
  ...SAMPLER_PLUGINS.map((plugin) => ({ name: plugin.kind, sampler: { kind: plugin.kind } })),
  { name: 'tpe (asynchronous)', sampler: { kind: 'tpe', asynchronous: true, trialsBeforeModel: 4 } },
];

/** Random budgets from a fixed seed. Common practice (no source): a seeded generator makes the property test repeatable. */
function randomDefinitions(name: string, count: number, sampler: Record<string, unknown>): Definition[] {
  const draw = seedrandom(`plans/${name}`);
  const int = (low: number, high: number): number => low + Math.floor(draw() * (high - low + 1));
  const definitions: Definition[] = [];
  while (definitions.length < count) {
    const maxEpochs = int(1, 30);
    const settings: Record<string, unknown> = { ...sampler, seed: int(0, 1000) };
    if (sampler.kind !== 'random' && sampler.kind !== 'sobol' && sampler.kind !== 'tpe') {
      settings.eta = int(2, 4);
      settings.minEpochs = int(1, Math.max(1, Math.floor(maxEpochs / 3)));
    }
    if (sampler.kind === 'tpe-hyperband') settings.iterations = int(1, 3);
    const definition: Definition = { space, budget: budgetSchema.parse({ trials: int(1, 40), maxEpochs }), sampler: samplerSchema.parse(settings) };
    // tpe-hyperband refuses budgets its passes cannot hold; that rule has its own test below.
    if (samplerBudgetProblem(definition)) continue;
    definitions.push(definition);
  }
  return definitions;
}

function ran(jobs: readonly Job[]): { trials: number; jobs: number; epochs: number } {
  return { trials: new Set(jobs.map((job) => job.trialId)).size, jobs: jobs.length, epochs: jobs.reduce((sum, job) => sum + job.toEpoch - job.fromEpoch, 0) };
}

describe.each(CASES)('the plan of $name over random budgets', ({ name, sampler }) => {
  const definitions = randomDefinitions(name, name.startsWith('tpe') ? 12 : 40, sampler);

  it('is what runs (synchronous samplers) or a limit never passed (asynchronous halving), with 1 and 4 threads', () => {
    for (const definition of definitions) {
      const plan = plannedBudget(definition);
      for (const threads of [1, 4]) {
        const { jobs } = simulate(createSampler(definition), { threads, loss, duration: uneven });
        const run = ran(jobs);
        const context = { budget: definition.budget, sampler: definition.sampler, threads };
        // Every sampler starts exactly budget.trials configurations.
        expect({ ...context, trials: run.trials }).toEqual({ ...context, trials: definition.budget.trials });
        expect({ ...context, trials: plan.trials }).toEqual({ ...context, trials: definition.budget.trials });
        if (plan.limit) {
          expect({ ...context, withinJobs: run.jobs <= plan.jobs, withinEpochs: run.epochs <= plan.epochs }).toEqual({ ...context, withinJobs: true, withinEpochs: true });
        } else {
          expect({ ...context, jobs: run.jobs, epochs: run.epochs }).toEqual({ ...context, jobs: plan.jobs, epochs: plan.epochs });
        }
      }
    }
  });

  it('is never passed when trials diverge (a rung then keeps fewer)', () => {
    for (const definition of definitions) {
      const plan = plannedBudget(definition);
      const run = ran(simulate(createSampler(definition), { threads: 4, loss: lossWithDivergence, duration: uneven }).jobs);
      expect(run.jobs).toBeLessThanOrEqual(plan.jobs);
      expect(run.epochs).toBeLessThanOrEqual(plan.epochs);
    }
  });
});

describe('asynchronous halving under its limit', () => {
  it('the demo budget (27 trials, 1 to 27 epochs, eta 3) plans 40 jobs and 81 epochs and runs them, one trial to 27 epochs, in many finishing orders', () => {
    const definition: Definition = { space, budget: budgetSchema.parse({ trials: 27, maxEpochs: 27 }), sampler: samplerSchema.parse({ kind: 'async-halving', seed: 7, eta: 3, minEpochs: 1 }) };
    // Source: Li et al., Hyperband, JMLR 18(185), 2018, Table 1 (bracket s = 3 of R = 27, eta = 3: 27, 9, 3, 1 configurations at 1, 3, 9, 27 epochs).
    expect(plannedBudget(definition)).toMatchObject({ trials: 27, jobs: 27 + 9 + 3 + 1, epochs: 27 * 1 + 9 * 2 + 3 * 6 + 1 * 18, limit: true });
    for (let order = 0; order < 20; order++) {
      const draw = seedrandom(`order/${order}`);
      const lengths = new Map<string, number>();
      const duration = (job: Job): number => {
        const key = `${job.trialId}/${job.rung}`;
        if (!lengths.has(key)) lengths.set(key, (job.toEpoch - job.fromEpoch) * (0.2 + 3 * draw()));
        return lengths.get(key)!;
      };
      const { jobs } = simulate(createSampler(definition), { threads: 1 + (order % 4), loss, duration });
      // Each rung promotes at most the schedule's count; with no trial diverging, every count is reached.
      expect(ran(jobs)).toEqual({ trials: 27, jobs: 40, epochs: 81 });
      expect(jobs.filter((job) => job.toEpoch === 27)).toHaveLength(1);
    }
  });
});

describe('Hyperband honours budget.trials', () => {
  it('cuts the brackets to the configurations asked for: 10 of maxEpochs 27, eta 3 is bracket s = 3 started with 10', () => {
    // Source: Li et al., Hyperband, JMLR 18(185), 2018, Table 1 (R = 27, eta = 3: brackets of 27, 12, 6 and 4 configurations).
    expect(hyperbandSchedule(27, 3, 1).map((bracket) => bracket.rounds[0]!.configurations)).toEqual([27, 12, 6, 4]);
    expect(configurationsPerPass(27, 3, 1)).toBe(49);
    expect(hyperbandBrackets(27, 3, 1, 10)).toEqual([
      { s: 3, rounds: [{ configurations: 10, epochs: 1 }, { configurations: 3, epochs: 3 }, { configurations: 1, epochs: 9 }, { configurations: 1, epochs: 27 }] },
    ]);
    expect(hyperbandBrackets(27, 3, 1, 30).map((bracket) => [bracket.s, bracket.rounds.map((round) => round.configurations)])).toEqual([
      [3, [27, 9, 3, 1]],
      [2, [3, 1, 1]],
    ]);
  });

  it('repeats passes for more configurations than one pass starts', () => {
    const brackets = hyperbandBrackets(27, 3, 1, 49 + 27 + 1);
    expect(brackets.map((bracket) => bracket.s)).toEqual([3, 2, 1, 0, 3, 2]);
    expect(brackets.at(-1)!.rounds[0]!.configurations).toBe(1);
  });

  it('TPE inside Hyperband refuses more configurations than its passes start, saying what would fit', () => {
    const definition = { budget: budgetSchema.parse({ trials: 100, maxEpochs: 27 }), sampler: samplerSchema.parse({ kind: 'tpe-hyperband', seed: 1, iterations: 1 }) };
    const problem = samplerBudgetProblem(definition);
    expect(problem?.[0]).toBe('budget.trials');
    expect(problem?.[1]).toMatch(/start at most 49 configurations; set budget.trials to at most 49 or sampler.iterations to 3/);
    expect(samplerBudgetProblem({ ...definition, sampler: samplerSchema.parse({ kind: 'tpe-hyperband', seed: 1, iterations: 3 }) })).toBeUndefined();
  });

  it('TPE inside Hyperband with iterations 4 and 49 trials plans and runs one pass: 49 configurations, 69 jobs', () => {
    const definition: Definition = { space, budget: budgetSchema.parse({ trials: 49, maxEpochs: 27 }), sampler: samplerSchema.parse({ kind: 'tpe-hyperband', seed: 7, iterations: 4 }) };
    const plan = plannedBudget(definition);
    expect(plan).toMatchObject({ trials: 49, jobs: 40 + 17 + 8 + 4 });
    const run = ran(simulate(createSampler(definition), { threads: 4, loss, duration: uneven }).jobs);
    expect(run).toEqual({ trials: plan.trials, jobs: plan.jobs, epochs: plan.epochs });
  });
});
