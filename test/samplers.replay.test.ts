import { describe, expect, it } from 'vitest';
import { createSampler } from '../src/samplers/index.js';
import { replay } from '../src/samplers/replay.js';
import { simulate } from '../src/samplers/simulate.js';
import type { Job, JobOutcome } from '../src/samplers/sampler.js';
import { budgetSchema } from '../src/core/budget.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { spaceSchema } from '../src/space/schema.js';
import type { StudyDefinition } from '../src/study/definition.js';

const definition = (sampler: object): Pick<StudyDefinition, 'space' | 'budget' | 'sampler'> => ({
  space: spaceSchema.parse({ depth: { min: 1, max: 3 }, width: { min: 8, max: 64 }, activation: ['relu'], learningRate: { min: 1e-4, max: 1e-1 } }),
  budget: budgetSchema.parse({ trials: 10, maxEpochs: 9 }),
  sampler: samplerSchema.parse(sampler),
});
const loss = (job: Job) => Math.abs(Math.log10(job.configuration.learningRate) + 2) + job.configuration.width / (100 * job.toEpoch);
const duration = (job: Job) => (job.toEpoch - job.fromEpoch) * (1 + (job.trialId % 4));
const key = (job: Job) => `${job.trialId}/${job.rung}/${job.fromEpoch}-${job.toEpoch}/b${job.bracket}`;
const outcomeKey = (o: { trialId: number; rung: number }) => `${o.trialId}/${o.rung}`;

/**
 * Run until `reports` outcomes are in, "crash" (the running jobs are lost, only outcomes were recorded),
 * rebuild a fresh sampler by replay, and finish. Returns every job that was actually run, in any order.
 */
function interruptedRun(sampler: object, reports: number, shuffle = false) {
  const first = simulate(createSampler(definition(sampler)), { threads: 3, loss, duration, stopAfterReports: reports });
  const recorded: JobOutcome[] = shuffle ? [...first.outcomes].reverse() : first.outcomes;
  const done = new Set(recorded.map(outcomeKey));
  const resumed = createSampler(definition(sampler));
  const { pending, unused } = replay(resumed, recorded);
  const rest = simulate(resumed, { threads: 3, loss, duration, running: pending });
  const runJobs = [...first.jobs.filter((job) => done.has(outcomeKey(job))), ...pending, ...rest.jobs];
  return { runJobs: runJobs.map(key).sort(), unused, pending };
}

describe.each([
  ['random', { kind: 'random', seed: 3 }],
  ['successive halving', { kind: 'successive-halving', seed: 3 }],
  ['hyperband', { kind: 'hyperband', seed: 3 }],
  ['sobol', { kind: 'sobol', seed: 3 }],
  ['tpe', { kind: 'tpe', seed: 3, trialsBeforeModel: 4, batchSize: 3 }],
  ['tpe-hyperband', { kind: 'tpe-hyperband', seed: 3, smallestGroup: 2 }],
])('replay of %s', (_name, sampler) => {
  const uninterrupted = simulate(createSampler(definition(sampler)), { threads: 3, loss, duration });
  const all = uninterrupted.jobs.map(key).sort();

  it.each([1, 4, 9, 13])('after a crash at %i reports gives the same jobs as an uninterrupted run', (reports) => {
    const { runJobs, unused } = interruptedRun(sampler, Math.min(reports, uninterrupted.outcomes.length - 1));
    expect(unused).toEqual([]);
    expect(runJobs).toEqual(all);
  });

  it('includes crashes where a job was lost while later ones had finished (non-empty pending)', () => {
    const pendingCounts = Array.from({ length: uninterrupted.outcomes.length - 1 }, (_, i) => interruptedRun(sampler, i + 1).pending.length);
    expect(Math.max(...pendingCounts)).toBeGreaterThan(0);
    for (let reports = 1; reports < uninterrupted.outcomes.length; reports++) expect(interruptedRun(sampler, reports).runJobs).toEqual(all);
  });

  it('does not depend on the order the outcomes are listed in', () => {
    expect(interruptedRun(sampler, 7, true).runJobs).toEqual(all);
  });

  it('hands the jobs running at the crash out again: as pending, or from the next calls to next()', () => {
    const crashed = simulate(createSampler(definition(sampler)), { threads: 3, loss, duration, stopAfterReports: 5 });
    const resumed = createSampler(definition(sampler));
    const { pending } = replay(resumed, crashed.outcomes);
    const again = pending.map(key);
    for (let answer = resumed.next(); typeof answer !== 'string'; answer = resumed.next()) again.push(key(answer));
    expect(crashed.running.length).toBeGreaterThan(0);
    for (const job of crashed.running) expect(again).toContain(key(job));
  });
});

describe('replay', () => {
  it('rebuilds asynchronous halving exactly from a one-worker history (outcomes in hand-out order)', () => {
    const sampler = { kind: 'async-halving', seed: 3 };
    const whole = simulate(createSampler(definition(sampler)), { threads: 1, loss });
    const crashed = simulate(createSampler(definition(sampler)), { threads: 1, loss, stopAfterReports: 8 });
    const resumed = createSampler(definition(sampler));
    const { pending, unused } = replay(resumed, crashed.outcomes);
    expect(unused).toEqual([]);
    const rest = simulate(resumed, { threads: 1, loss, running: pending });
    expect([...crashed.jobs.slice(0, 8), ...pending, ...rest.jobs].map(key)).toEqual(whole.jobs.map(key));
  });

  it('rejects two outcomes recorded for the same trial and rung', () => {
    const outcome = { trialId: 0, rung: 0, loss: 1 };
    expect(() => replay(createSampler(definition({ kind: 'random' })), [outcome, outcome])).toThrow(/two outcomes recorded for trial 0 at rung 0/);
  });

  it('returns outcomes the sampler never asks for as unused', () => {
    const { unused } = replay(createSampler(definition({ kind: 'random' })), [{ trialId: 0, rung: 4, loss: 1 }]);
    expect(unused).toEqual([{ trialId: 0, rung: 4, loss: 1 }]);
  });
});
