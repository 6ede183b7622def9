import { copyFile, mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { runStudy, type RunOptions } from '../../src/runner/run-study.js';
import type { StudyOutcome } from '../../src/runner/execute-study.js';
import { resumeStudy } from '../../src/runner/resume-study.js';
import type { TrialRecord } from '../../src/core/trial.js';
import type { StudyDefinitionInput } from '../../src/study/definition.js';

const TINY = fileURLToPath(new URL('../../studies/tiny/', import.meta.url));

/** The tiny binary study (120 rows) as a definition object. */
export function tinyStudy(overrides: Partial<StudyDefinitionInput> = {}): StudyDefinitionInput {
  return {
    name: 'tiny',
    data: { csv: 'tiny.csv', target: 'fails_within_week', task: 'binary', splitSeed: 1 },
    space: {
      depth: { min: 1, max: 2 },
      width: { min: 4, max: 16, log: true },
      activation: ['relu', 'tanh'],
      learningRate: { min: 0.003, max: 0.1 },
      batchSize: [16, 32],
      optimizer: ['adam'],
    },
    budget: { trials: 4, maxEpochs: 3 },
    sampler: { kind: 'random', seed: 1 },
    goal: { metric: 'auc' },
    threads: 2,
    ...overrides,
  };
}

/**
 * The tiny study with networks wide and epochs many enough that a trial lasts a few tenths of a
 * second on the engine, so a run is still going when a test interrupts or kills it.
 */
export function longTinyStudy(trials: number, threads: number): StudyDefinitionInput {
  const base = tinyStudy();
  return tinyStudy({
    space: { ...base.space, depth: { min: 2, max: 3 }, width: { min: 64, max: 256, log: true } },
    budget: { trials, maxEpochs: 30 },
    threads,
  });
}

/** Write a definition beside a copy of the tiny CSV in a fresh temporary folder; returns the definition's path. */
export async function writeTinyStudy(definition: StudyDefinitionInput = tinyStudy()): Promise<string> {
  const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-tiny-'));
  await copyFile(path.join(TINY, 'tiny.csv'), path.join(dir, 'tiny.csv'));
  const file = path.join(dir, 'study.json');
  await writeFile(file, JSON.stringify(definition, null, 2));
  return file;
}

/**
 * Writes `definition` as a tiny study and runs it until `trials` trials have finished, then stops it
 * as an interrupt would (no grace period). Returns the run directory and the interrupted outcome.
 */
export async function runUntilTrialsFinished(
  definition: StudyDefinitionInput,
  trials: number,
  options: Omit<RunOptions, 'out' | 'signal' | 'graceSeconds' | 'onEvent'>,
): Promise<{ out: string; interrupted: StudyOutcome }> {
  const file = await writeTinyStudy(definition);
  const out = path.join(path.dirname(file), 'run');
  const controller = new AbortController();
  let finished = 0;
  const interrupted = await runStudy(file, {
    ...options,
    out,
    signal: controller.signal,
    graceSeconds: 0,
    onEvent: (event) => {
      if (event.type === 'trial-finished' && ++finished === trials) controller.abort();
    },
  });
  return { out, interrupted };
}

/**
 * Runs `definition` straight with 1 thread and with 2, then again interrupted after 3 finished trials
 * and resumed on 2 threads; returns each run's trials as `summary` gives them (by trial id), so a test
 * can ask that all four agree. `summary` should name the searched choice, the score and the status.
 */
export async function trialsStraightAndResumed<T>(
  definition: () => StudyDefinitionInput,
  summary: (trials: readonly TrialRecord[]) => T[],
): Promise<{ one: T[]; two: T[]; interrupted: StudyOutcome; resumed: T[]; resumedState: string }> {
  const straight = async (threads: number): Promise<T[]> => {
    const file = await writeTinyStudy(definition());
    return summary((await runStudy(file, { out: path.join(path.dirname(file), 'run'), threads })).doc.trials);
  };
  const one = await straight(1);
  const two = await straight(2);
  const { out, interrupted } = await runUntilTrialsFinished(definition(), 3, { threads: 2 });
  const resumedDoc = (await resumeStudy(out, { threads: 2 })).doc;
  return { one, two, interrupted, resumed: summary(resumedDoc.trials), resumedState: resumedDoc.state };
}
