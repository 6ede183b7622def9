/**
 * The run loop with every registered sampler on a closed-form transport: hundreds of jobs in seconds.
 * No trial is lost, every promotion continues from a checkpoint, and the kept checkpoints and the
 * winner follow the one ranking.
 */
import { readdir } from 'node:fs/promises';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { runStudy, type StudyOutcome } from '../src/runner/run-study.js';
import type { StudyEvent } from '../src/runner/events.js';
import { SAMPLER_PLUGINS } from '../src/samplers/index.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { ClosedFormTransport } from '../src/transports/closed-form.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

/**
 * Better near learning rate 0.01, with more width and more epochs. With `divergeLate`, the best
 * configurations diverge after epoch 9: trials that led the ranking leave it near the end.
 */
function figures(params: TrialConfiguration, epoch: number, divergeLate: boolean) {
  if (divergeLate && Math.abs(Math.log10(params.learningRate) + 2) < 0.4 && epoch > 9) return { validationLoss: Infinity };
  const loss = Math.abs(Math.log10(params.learningRate) + 2) + 4 / params.width + 2 / epoch;
  // An AUC above the constant predictor's 0.5, as a network that learns something has (below it a trial is flagged no-lift).
  return { validationLoss: loss, metrics: { auc: 0.5 + 0.5 / (1 + loss) } };
}

async function run(
  kind: string,
  capacity: number,
  options: { divergeLate?: boolean; trials?: number; millisecondsPerEpoch?: number; onEvent?: (event: StudyEvent) => void } = {},
): Promise<StudyOutcome> {
  const definition: StudyDefinitionInput = tinyStudy({
    budget: { trials: options.trials ?? 18, maxEpochs: 27 },
    sampler: { kind, seed: 4 } as StudyDefinitionInput['sampler'],
    space: { depth: { min: 1, max: 2 }, width: { min: 4, max: 64, log: true }, activation: ['relu'], learningRate: { min: 0.001, max: 0.1 } },
  });
  const file = await writeTinyStudy(definition);
  return runStudy(file, {
    out: path.join(path.dirname(file), `run-${capacity}`),
    ...(options.onEvent ? { onEvent: options.onEvent } : {}),
    transport: () =>
      new ClosedFormTransport({ capacity, millisecondsPerEpoch: options.millisecondsPerEpoch ?? 0, evaluate: (params, epoch) => figures(params, epoch, options.divergeLate ?? false) }),
  });
}

describe.each(SAMPLER_PLUGINS.map((plugin) => [plugin.kind]))('run loop with %s', (kind) => {
  it('ends with no failed trial, no retry, and every promotion continued from its checkpoint', async () => {
    const { doc } = await run(kind, 3);
    expect(doc.state).toBe('finished');
    expect(doc.trials.filter((t) => t.status === 'failed' || t.status === 'training' || t.status === 'waiting')).toEqual([]);
    for (const trial of doc.trials) {
      expect(trial.retries).toBe(0);
      for (const job of trial.jobs) {
        expect(job).toMatchObject({ attempts: 1, status: 'done' });
        if (job.rung > 0) expect({ trial: trial.id, rung: job.rung, fromCheckpoint: job.fromCheckpoint }).toEqual({ trial: trial.id, rung: job.rung, fromCheckpoint: true });
      }
    }
  });

  it('ranks first the best objective among the trials that trained the most epochs', async () => {
    const { doc, ranking } = await run(kind, 2);
    const most = Math.max(...doc.trials.map((t) => t.epochsTrained));
    const best = Math.max(...doc.trials.filter((t) => t.epochsTrained === most).map((t) => t.score ?? -Infinity));
    expect(ranking[0]!.trial.epochsTrained).toBe(most);
    expect(ranking[0]!.trial.score).toBe(best);
  });

  it('announces a leader that never gets worse: the best finished trial, its score never lower', async () => {
    const leaders: { epochs: number; score: number }[] = [];
    // Epochs take time here, so continuations are still running when other outcomes are announced.
    const { doc } = await run(kind, 3, {
      millisecondsPerEpoch: 2,
      onEvent: (event) => {
        if (event.type === 'trial-finished' && event.best) leaders.push({ epochs: event.best.epochsTrained, score: event.best.score! });
      },
    });
    // No leader is announced until a trial finishes (asynchronous halving may promote none to the epoch limit).
    expect(leaders.length > 0).toBe(doc.trials.some((t) => t.status === 'trained'));
    leaders.slice(1).forEach((leader, i) => {
      const before = leaders[i]!;
      const notWorse = leader.epochs === 27 && leader.score >= before.score;
      expect({ before, leader, notWorse }).toEqual({ before, leader, notWorse: true });
    });
  });

  it('keeps exactly the checkpoints of the best three, even when trials above them diverge later', async () => {
    const outcome = await run(kind, 3, { divergeLate: true, trials: 40 });
    expect(outcome.doc.trials.some((t) => t.status === 'diverged')).toBe(true);
    const kept = (await readdir(path.join(outcome.dir, 'checkpoints'))).sort();
    expect(kept).toEqual(outcome.ranking.slice(0, 3).map((r) => `trial-${r.trial.id}.ckpt`).sort());
  });
});
