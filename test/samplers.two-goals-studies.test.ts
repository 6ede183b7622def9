/**
 * TPE and TPE inside Hyperband in whole studies with a second goal (`footprint.against`), on a
 * transport that evaluates a closed-form function in place of training: the same trials with 1 and 2
 * at once and after an interruption and a resume, and other trials than the same study with one goal
 * (the split follows both goals); and both samplers on a virtual clock, replayed at several points. Source: Ozaki, Tanigaki, Watanabe, Onishi, GECCO 2020 (the split,
 * see test/samplers.two-goals.test.ts).
 */
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { resumeStudy } from '../src/runner/resume-study.js';
import { runStudy } from '../src/runner/run-study.js';
import type { StudyDocument } from '../src/store/types.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { ClosedFormTransport } from '../src/transports/closed-form.js';
import { runUntilTrialsFinished, tinyStudy, writeTinyStudy } from './helpers/studies.js';
import { unevenDuration } from './helpers/test-functions.js';
import { createSampler, replay, secondGoalMeasure, simulate, type Job } from '../src/samplers/index.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { budgetSchema } from '../src/core/budget.js';
import { spaceSchema } from '../src/space/schema.js';

/**
 * Best near learning rate 0.02 and with wide networks, so the score and the network's size pull apart;
 * small enough to beat the constant baseline's loss on the tiny data (no `no-lift` flag). Invented.
 */
const evaluate = (params: TrialConfiguration, epoch: number) => ({
  validationLoss: 0.05 * (Math.abs(Math.log10(params.learningRate) + 1.7) + 8 / (params.width * params.depth) + (params.activation === 'tanh' ? 0.2 : 0) + 1 / epoch),
});
const transport = (capacity: number) => () => new ClosedFormTransport({ evaluate, capacity });

const tpe = { budget: { trials: 14, maxEpochs: 3 }, sampler: { kind: 'tpe', seed: 4, trialsBeforeModel: 6, batchSize: 2 }, goal: { metric: 'validationLoss' } } as const;
const tpeHyperband = { budget: { trials: 34, maxEpochs: 9 }, sampler: { kind: 'tpe-hyperband', seed: 4, iterations: 2, smallestGroup: 2 }, goal: { metric: 'validationLoss' } } as const;
const wider = { ...tinyStudy().space, width: { min: 4, max: 64, log: true } };

const definitions: [string, 'weights' | 'time', StudyDefinitionInput][] = [
  ['tpe', 'weights', tinyStudy({ ...tpe, space: wider, footprint: { against: 'weights' } })],
  ['tpe', 'time', tinyStudy({ ...tpe, space: wider, footprint: { against: 'time' } })],
  ['tpe-hyperband', 'weights', tinyStudy({ ...tpeHyperband, space: wider, footprint: { against: 'weights' } })],
];

const trialsOf = (doc: StudyDocument) =>
  doc.trials.map((t) => ({ id: t.id, params: t.configuration, origin: t.origin, epochs: t.epochsTrained, objective: t.score })).sort((a, b) => a.id - b.id);

async function uninterrupted(definition: StudyDefinitionInput, capacity: number): Promise<StudyDocument> {
  const file = await writeTinyStudy(definition);
  return (await runStudy(file, { out: path.join(path.dirname(file), 'run'), transport: transport(capacity) })).doc;
}

describe.each(definitions)('a %s study against %s on a closed-form transport', (_kind, _against, definition) => {
  it('gives the same trials with 1 and 2 at once, and after an interruption and a resume', async () => {
    const first = await uninterrupted(definition, 1);
    // Every result reaches the model (a flagged one would be told to it as a bad result without a loss).
    expect(first.trials.filter((t) => t.flags !== undefined)).toEqual([]);
    const one = trialsOf(first);
    expect(one.map((t) => t.origin?.method)).toContain('tpe');
    expect(trialsOf(await uninterrupted(definition, 2))).toEqual(one);
    const { out, interrupted } = await runUntilTrialsFinished(definition, 7, { transport: transport(2) });
    expect(interrupted.doc.state).not.toBe('finished');
    const resumed = await resumeStudy(out, { transport: transport(2) });
    expect(resumed.doc.state).toBe('finished');
    expect(trialsOf(resumed.doc)).toEqual(one);
  });

  it('proposes other configurations than the same study with one goal once the model proposes', async () => {
    const { footprint: _footprint, ...oneGoal } = definition;
    const two = trialsOf(await uninterrupted(definition, 2));
    const one = trialsOf(await uninterrupted(oneGoal, 2));
    const modelled = (trials: typeof one) => trials.filter((t) => t.origin?.method === 'tpe').map((t) => [t.id, t.params]);
    expect(modelled(two).length).toBeGreaterThan(0);
    expect(modelled(two)).not.toEqual(modelled(one));
  });
});

describe.each([
  ['tpe', { kind: 'tpe', seed: 4, trialsBeforeModel: 8, batchSize: 3 }, 24],
  ['tpe-hyperband', { kind: 'tpe-hyperband', seed: 3, iterations: 2, smallestGroup: 2 }, 34],
] as const)('the %s sampler with a second goal on a virtual clock', (_kind, sampler, trials) => {
  const definition = {
    space: spaceSchema.parse({ depth: { min: 1, max: 3 }, width: { min: 8, max: 128, log: true }, activation: ['relu', 'tanh'], learningRate: { min: 1e-4, max: 1e-1 } }),
    budget: budgetSchema.parse({ trials, maxEpochs: 9 }),
    sampler: samplerSchema.parse(sampler),
    secondGoal: secondGoalMeasure('weights', { inputs: 12, outputs: 1 }),
  };
  // Invented: better with wide networks, so the two goals pull apart.
  const loss = (job: Job) => Math.abs(Math.log10(job.configuration.learningRate) + 2) + 16 / (job.configuration.width * job.configuration.depth) + 1 / job.toEpoch;
  const key = (job: Job) => JSON.stringify([job.trialId, job.rung, job.fromEpoch, job.toEpoch, job.configuration, job.origin ?? null]);

  it('hands out the same jobs with 1 and 3 threads, and after a replay at any of several points', () => {
    const one = simulate(createSampler(definition), { threads: 1, loss });
    const whole = simulate(createSampler(definition), { threads: 3, loss, duration: unevenDuration });
    expect(whole.jobs.some((job) => job.origin?.method === 'tpe')).toBe(true);
    expect(whole.jobs.map(key).sort()).toEqual(one.jobs.map(key).sort());
    for (const reports of [3, 9, 13, 20]) {
      const crashed = simulate(createSampler(definition), { threads: 3, loss, duration: unevenDuration, stopAfterReports: reports });
      const resumed = createSampler(definition);
      const { pending, unused } = replay(resumed, [...crashed.outcomes].reverse());
      expect(unused).toEqual([]);
      const rest = simulate(resumed, { threads: 3, loss, duration: unevenDuration, running: pending });
      const done = new Set(crashed.outcomes.map((o) => `${o.trialId}/${o.rung}`));
      const ran = [...crashed.jobs.filter((job) => done.has(`${job.trialId}/${job.rung}`)), ...pending, ...rest.jobs];
      expect(ran.map(key).sort()).toEqual(whole.jobs.map(key).sort());
    }
  });

  it('hands out other configurations than without the second goal', () => {
    const { secondGoal: _secondGoal, ...oneGoal } = definition;
    const modelled = (jobs: readonly Job[]) => jobs.filter((job) => job.origin?.method === 'tpe').map(key);
    expect(modelled(simulate(createSampler(definition), { threads: 3, loss }).jobs)).not.toEqual(modelled(simulate(createSampler(oneGoal), { threads: 3, loss }).jobs));
  });
});
