/**
 * Early stopping through the real run loop: the study file records the best epoch and the stop, a
 * resumed study replays stopped trials as not promotable and ends as an uninterrupted one, and the
 * same trials come out with 1 and 2 threads.
 */
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { recordedOutcomes } from '../src/runner/execute-study.js';
import { resumeStudy } from '../src/runner/resume-study.js';
import { runStudy } from '../src/runner/run-study.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import type { StudyDocument } from '../src/store/types.js';
import { runUntilTrialsFinished, tinyStudy, writeTinyStudy } from './helpers/studies.js';

const definition: StudyDefinitionInput = tinyStudy({
  budget: { trials: 9, maxEpochs: 9 },
  sampler: { kind: 'successive-halving', seed: 3, eta: 3, minEpochs: 1 },
  space: { ...tinyStudy().space, learningRate: { min: 0.03, max: 0.3 }, schedule: { kind: ['constant', 'cosine'] } },
  goal: { metric: 'validationLoss' },
  earlyStopping: { rule: 'patience', patience: 1 },
});

/** What must not depend on threads or interruptions: each trial's scores, best epoch, stop and jobs. */
const trialsOf = (doc: StudyDocument) =>
  doc.trials
    .map((t) => ({ id: t.id, configuration: t.configuration, score: t.score, rungScores: t.rungScores, bestEpoch: t.bestEpoch, stoppedAtEpoch: t.stoppedAtEpoch, status: t.status, jobs: t.jobs.map((j) => [j.fromEpoch, j.toEpoch]) }))
    .sort((a, b) => a.id - b.id);

async function uninterrupted(threads: number): Promise<StudyDocument> {
  const file = await writeTinyStudy(definition);
  return (await runStudy(file, { out: path.join(path.dirname(file), 'run'), threads })).doc;
}

describe('early stopping in the run loop', () => {
  it('records bestEpoch, stoppedEarly and stoppedAtEpoch, and a stopped trial trains no later job', async () => {
    const doc = await uninterrupted(2);
    const stopped = doc.trials.filter((t) => t.stoppedEarly);
    expect(stopped.length).toBeGreaterThan(0);
    for (const trial of doc.trials) {
      expect(trial.bestEpoch).toBeDefined();
      expect(trial.curve.some((p) => p.epoch === trial.bestEpoch)).toBe(true);
    }
    for (const trial of stopped) {
      expect(trial.epochsTrained).toBe(trial.stoppedAtEpoch);
      expect(trial.jobs.at(-1)!.toEpoch).toBeGreaterThanOrEqual(trial.stoppedAtEpoch!);
      expect(trial.status).not.toBe('waiting');
    }
    // The sampler is told: the replayed outcomes mark the stopped trials' last rung.
    const outcomes = recordedOutcomes(doc.trials, doc.goal);
    for (const trial of stopped) expect(outcomes.find((o) => o.trialId === trial.id && o.rung === trial.rungScores.length - 1)?.stopped).toBe(true);
  });

  it('gives the same trials with 1 and 2 threads, and after an interruption and a resume', async () => {
    const one = trialsOf(await uninterrupted(1));
    expect(trialsOf(await uninterrupted(2))).toEqual(one);
    const { out, interrupted } = await runUntilTrialsFinished(definition, 10, { threads: 2 });
    expect(interrupted.doc.state).not.toBe('finished');
    const resumed = await resumeStudy(out, { threads: 2 });
    expect(resumed.doc.state).toBe('finished');
    expect(trialsOf(resumed.doc)).toEqual(one);
  });
});
