/**
 * The halving samplers on real training: promoted trials continue from their checkpoints, and
 * successive halving and Hyperband give the same promotions, curves and ranking with 1 and 2 threads.
 */
import { existsSync } from 'node:fs';
import { readdir } from 'node:fs/promises';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { runStudy, type StudyOutcome } from '../src/runner/run-study.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

async function runWith(definition: StudyDefinitionInput, threads: number): Promise<StudyOutcome> {
  const file = await writeTinyStudy(definition);
  return runStudy(file, { out: path.join(path.dirname(file), `run-${threads}`), threads });
}

/** Everything about the trials that must not depend on the number of threads. */
const resultOf = (outcome: StudyOutcome) =>
  outcome.doc.trials
    .map((t) => ({
      id: t.id,
      status: t.status,
      rung: t.rung,
      bracket: t.bracket,
      epochs: t.epochsTrained,
      rungScores: t.rungScores,
      curve: t.curve.map(({ seconds: _seconds, ...point }) => point),
    }))
    .sort((a, b) => a.id - b.id);

const halving = tinyStudy({
  budget: { trials: 9, maxEpochs: 9 },
  sampler: { kind: 'successive-halving', seed: 5, eta: 3, minEpochs: 1 },
});

describe('successive halving on real training', () => {
  it('gives the same promotions, curves and ranking with 1 and with 2 threads', async () => {
    const one = await runWith(halving, 1);
    const two = await runWith(halving, 2);
    expect(resultOf(two)).toEqual(resultOf(one));
    expect(two.ranking.map((r) => r.trial.id)).toEqual(one.ranking.map((r) => r.trial.id));
    // 9 configurations at 1 epoch, the best 3 to 3 epochs, the best 1 to 9.
    expect(one.doc.trials.filter((t) => t.epochsTrained === 1)).toHaveLength(6);
    expect(one.doc.trials.filter((t) => t.epochsTrained === 3)).toHaveLength(2);
    expect(one.doc.trials.filter((t) => t.epochsTrained === 9)).toHaveLength(1);
    expect(one.doc.totals?.epochsTrained).toBe(6 * 1 + 2 * 3 + 9);
  });

  it('continues a promoted trial from its checkpoint, so its curve runs on without restarting', async () => {
    const outcome = await runWith(halving, 2);
    const winner = outcome.ranking[0]!.trial;
    expect(winner.epochsTrained).toBe(9);
    expect(winner.curve.map((p) => p.epoch)).toEqual([1, 2, 3, 4, 5, 6, 7, 8, 9]);
    expect(winner.rungScores).toHaveLength(3);
    expect(winner.rungScores[2]).toBe(winner.score);
  });

  it('keeps the checkpoints of the best few trials only', async () => {
    const outcome = await runWith(halving, 2);
    const kept = await readdir(path.join(outcome.dir, 'checkpoints'));
    expect(kept.sort()).toEqual(outcome.ranking.slice(0, 3).map((r) => `trial-${r.trial.id}.ckpt`).sort());
  });
});

describe('Hyperband and asynchronous halving on real training', () => {
  it('Hyperband gives the same trials and ranking with 1 and with 2 threads', async () => {
    // maxEpochs 4, eta 2: brackets of 4, 3 and 3 configurations, so 10 is one whole pass.
    const definition = tinyStudy({ budget: { trials: 10, maxEpochs: 4 }, sampler: { kind: 'hyperband', seed: 2, eta: 2, minEpochs: 1 } });
    const one = await runWith(definition, 1);
    const two = await runWith(definition, 2);
    expect(resultOf(two)).toEqual(resultOf(one));
    expect(two.ranking.map((r) => r.trial.id)).toEqual(one.ranking.map((r) => r.trial.id));
    expect(new Set(one.doc.trials.map((t) => t.bracket))).toEqual(new Set([0, 1, 2]));
  });

  it('asynchronous halving runs to its budget and records why each trial was promoted', async () => {
    const definition = tinyStudy({ budget: { trials: 9, maxEpochs: 9 }, sampler: { kind: 'async-halving', seed: 3, eta: 3, minEpochs: 1 } });
    const outcome = await runWith(definition, 2);
    expect(outcome.doc.state).toBe('finished');
    expect(outcome.doc.trials).toHaveLength(9);
    const promoted = outcome.doc.trials.filter((t) => t.rung > 0);
    expect(promoted.length).toBeGreaterThan(0);
    for (const trial of promoted) expect(trial.promotions?.map((p) => p.fromRung)).toEqual([...Array(trial.rung).keys()]);
    expect(outcome.doc.totals!.threadUtilisation).toBeGreaterThan(0);
    expect(existsSync(path.join(outcome.dir, 'checkpoints'))).toBe(true);
  });
});
