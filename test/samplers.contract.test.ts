/**
 * The promises every registered sampler keeps, checked on each plug-in of `samplers/registry.ts`
 * (a new kind joins this suite by being registered). A loss function stands in for training.
 */
import { describe, expect, it } from 'vitest';
import { createSampler, plannedBudget, replay, samplerPlugin, SAMPLER_PLUGINS, simulate } from '../src/samplers/index.js';
import type { Job, JobOutcome } from '../src/samplers/sampler.js';
import { budgetSchema } from '../src/core/budget.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { spaceSchema } from '../src/space/schema.js';
import type { StudyDefinition } from '../src/study/definition.js';
import type { TrialConfiguration } from '../src/core/configuration.js';

const definitionFor = (kind: string): Pick<StudyDefinition, 'space' | 'budget' | 'sampler'> => ({
  space: spaceSchema.parse({
    depth: { min: 1, max: 3 },
    width: { min: 4, max: 64, log: true },
    activation: ['relu', 'tanh', 'elu'],
    learningRate: { min: 1e-4, max: 0.3 },
    batchSize: [16, 32, 64],
    optimizer: ['sgd', 'adam'],
    dropout: { min: 0, max: 0.5 },
  }),
  budget: budgetSchema.parse({ trials: 24, maxEpochs: 27 }),
  sampler: samplerSchema.parse({ kind, seed: 11 }),
});

/** Deterministic stand-in for training: better near learning rate 0.01 and with more epochs; very high rates diverge. */
function loss(job: Job): number | null {
  const { learningRate, width, dropout } = job.configuration;
  if (learningRate > 0.25 && job.toEpoch > 3) return null;
  return Math.abs(Math.log10(learningRate) + 2) + 1 / Math.sqrt(width) + dropout / 4 + 1 / job.toEpoch;
}

const durations: Record<string, (job: Job) => number> = {
  epochs: (job) => job.toEpoch - job.fromEpoch,
  uneven: (job) => (job.toEpoch - job.fromEpoch) * (1 + ((job.trialId * 7) % 5)),
};

/** Kinds that train every trial to maxEpochs in one job, so no trial ever continues. */
const SINGLE_JOB_KINDS = new Set(['random', 'sobol', 'tpe']);

const key = (job: Job): string => `${job.trialId}/${job.rung}/${job.fromEpoch}-${job.toEpoch}/${JSON.stringify(job.configuration)}`;

describe.each(SAMPLER_PLUGINS.map((plugin) => [plugin.kind]))('sampler contract: %s', (kind) => {
  const definition = definitionFor(kind);
  const plugin = samplerPlugin(kind);

  it('hands out no job twice, and continues a trial only where its last job ended', () => {
    const { jobs } = simulate(createSampler(definition), { threads: 3, loss, duration: durations.uneven });
    expect(new Set(jobs.map((j) => `${j.trialId}/${j.rung}`)).size).toBe(jobs.length);
    const reached = new Map<number, number>();
    for (const job of jobs) {
      expect(job.fromEpoch).toBe(reached.get(job.trialId) ?? 0);
      expect(job.toEpoch).toBeGreaterThan(job.fromEpoch);
      reached.set(job.trialId, job.toEpoch);
    }
  });

  it('takes every outcome once and says done, within its planned trials and epochs', () => {
    const sampler = createSampler(definition);
    const { jobs, outcomes } = simulate(sampler, { threads: 2, loss });
    expect(outcomes).toHaveLength(jobs.length);
    expect(sampler.next()).toBe('done');
    const plan = plannedBudget(definition);
    expect(new Set(jobs.map((j) => j.trialId)).size).toBeLessThanOrEqual(plan.trials);
    const epochs = jobs.reduce((sum, j) => sum + j.toEpoch - j.fromEpoch, 0);
    // Every plan is the most a sampler runs (an order-dependent sampler's plan is a limit it enforces).
    expect(epochs).toBeLessThanOrEqual(plan.epochs);
    expect(jobs.length).toBeLessThanOrEqual(plan.jobs);
    expect(() => sampler.report(outcomes[0]!)).toThrow();
  });

  it('never trains a job past maxEpochs, and gives each trial one configuration', () => {
    const { jobs } = simulate(createSampler(definition), { threads: 2, loss });
    const params = new Map<number, TrialConfiguration>();
    for (const job of jobs) {
      expect(job.toEpoch).toBeLessThanOrEqual(definition.budget.maxEpochs);
      if (params.has(job.trialId)) expect(job.configuration).toEqual(params.get(job.trialId));
      params.set(job.trialId, job.configuration);
    }
  });

  it('says a trial may continue from the moment its job reports until its next job is handed out', () => {
    const sampler = createSampler(definition);
    /** Trials whose last job reported and that have not been handed a job since: each check of them, in order. */
    const checks = new Map<number, boolean[]>();
    const continued: { trialId: number; checks: boolean[] }[] = [];
    const checkWaiting = (): void => {
      for (const [trialId, seen] of checks) seen.push(sampler.mayContinue(trialId));
    };
    simulate(sampler, {
      threads: 3,
      loss,
      duration: durations.uneven,
      afterReport: (outcome: JobOutcome) => {
        checks.set(outcome.trialId, []);
        checkWaiting();
      },
      afterHandOut: (job) => {
        const seen = checks.get(job.trialId);
        if (seen && job.fromEpoch > 0) continued.push({ trialId: job.trialId, checks: seen });
        checks.delete(job.trialId);
        checkWaiting();
      },
    });
    for (const { trialId, checks: seen } of continued) {
      expect({ trialId, allTrue: seen.every(Boolean) }).toEqual({ trialId, allTrue: true });
    }
    if (!SINGLE_JOB_KINDS.has(kind)) expect(continued.length).toBeGreaterThan(0);
  });

  if (plugin.traits.deterministic) {
    it('hands out the same jobs with 1 worker and with 4, in any finishing order', () => {
      const one = simulate(createSampler(definition), { threads: 1, loss }).jobs.map(key).sort();
      const four = simulate(createSampler(definition), { threads: 4, loss, duration: durations.uneven }).jobs.map(key).sort();
      expect(four).toEqual(one);
    });

    it('after an interruption at any job boundary, a replayed sampler finishes with the same jobs', () => {
      const whole = simulate(createSampler(definition), { threads: 2, loss, duration: durations.uneven });
      const expected = whole.jobs.map(key).sort();
      for (let cut = 0; cut <= whole.outcomes.length; cut += 1) {
        const crashed = simulate(createSampler(definition), { threads: 2, loss, duration: durations.uneven, stopAfterReports: cut });
        const history = new Map(crashed.jobs.map((job) => [job.trialId, job.configuration]));
        const resumed = createSampler(definition);
        const { pending } = replay(resumed, crashed.outcomes, history);
        const rest = simulate(resumed, { threads: 2, loss, duration: durations.uneven, running: pending });
        const finished = new Set(crashed.outcomes.map((o) => `${o.trialId}/${o.rung}`));
        const all = [...crashed.jobs.filter((job) => finished.has(`${job.trialId}/${job.rung}`)), ...pending, ...rest.jobs];
        expect(all.map(key).sort()).toEqual(expected);
      }
    });
  }

  it('refuses to replay a history whose configurations it would not propose', () => {
    const first = simulate(createSampler(definition), { threads: 1, loss, stopAfterReports: 2 });
    const tampered = new Map(first.jobs.map((job) => [job.trialId, { ...job.configuration, width: job.configuration.width + 1 }]));
    expect(() => replay(createSampler(definition), first.outcomes, tampered)).toThrow(/was trained with .* but the sampler now proposes/);
  });
});
