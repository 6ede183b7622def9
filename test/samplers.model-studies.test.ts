/**
 * The model-based kinds in whole studies, with a transport that evaluates a closed-form function in
 * place of training: what proposed each trial is recorded in the study file, and an interrupted and
 * resumed study ends with the same trials as an uninterrupted one.
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

/** Best near learning rate 0.02 and narrow nets; falls with the epochs. */
const evaluate = (params: TrialConfiguration, epoch: number) => ({
  validationLoss: Math.abs(Math.log10(params.learningRate) + 1.7) + params.width / 64 + (params.activation === 'tanh' ? 0.2 : 0) + 1 / epoch,
});
const transport = (capacity: number) => () => new ClosedFormTransport({ evaluate, capacity });

const definitions: [string, StudyDefinitionInput][] = [
  ['tpe', tinyStudy({ budget: { trials: 14, maxEpochs: 3 }, sampler: { kind: 'tpe', seed: 4, trialsBeforeModel: 6, batchSize: 2 }, goal: { metric: 'validationLoss' } })],
  ['tpe-hyperband', tinyStudy({ budget: { trials: 34, maxEpochs: 9 }, sampler: { kind: 'tpe-hyperband', seed: 4, iterations: 2, smallestGroup: 2 }, goal: { metric: 'validationLoss' } })],
];

const trialsOf = (doc: StudyDocument) =>
  doc.trials.map((t) => ({ id: t.id, params: t.configuration, origin: t.origin, epochs: t.epochsTrained, objective: t.score })).sort((a, b) => a.id - b.id);

async function uninterrupted(definition: StudyDefinitionInput, capacity: number): Promise<StudyDocument> {
  const file = await writeTinyStudy(definition);
  return (await runStudy(file, { out: path.join(path.dirname(file), 'run'), transport: transport(capacity) })).doc;
}

describe.each(definitions)('a %s study on a closed-form transport', (kind, definition) => {
  it('records for each trial what proposed it, and switches from exploring to the model', async () => {
    const doc = await uninterrupted(definition, 2);
    expect(doc.state).toBe('finished');
    const methods = trialsOf(doc).map((t) => t.origin?.method);
    expect(methods.every((method) => method !== undefined)).toBe(true);
    expect(methods[0]).toBe(kind === 'tpe' ? 'sobol' : 'random');
    expect(methods).toContain('tpe');
    if (kind === 'tpe-hyperband') expect(trialsOf(doc).some((t) => t.origin?.fittedOnEpochs !== undefined)).toBe(true);
  });

  it('gives the same trials with 1 and 3 at once, and after an interruption and a resume', async () => {
    const one = trialsOf(await uninterrupted(definition, 1));
    expect(trialsOf(await uninterrupted(definition, 3))).toEqual(one);
    const { out, interrupted } = await runUntilTrialsFinished(definition, 7, { transport: transport(2) });
    expect(interrupted.doc.state).not.toBe('finished');
    const resumed = await resumeStudy(out, { transport: transport(2) });
    expect(resumed.doc.state).toBe('finished');
    expect(trialsOf(resumed.doc)).toEqual(one);
  });
});
