import { mkdtemp } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { MemoryCheckpointStore } from '../src/checkpoints/memory-store.js';
import { CheckpointKeeper } from '../src/runner/checkpoint-keeper.js';
import { BatchedPersistence } from '../src/runner/persistence.js';
import type { Sampler } from '../src/samplers/sampler.js';
import { StudyStore } from '../src/store/study-store.js';
import type { StudyDocument } from '../src/store/types.js';
import type { TrialRecord, TrialStatus } from '../src/core/trial.js';
import { trialRecord } from './helpers/trials.js';

function trial(id: number, status: TrialStatus, objective: number | null): TrialRecord {
  return trialRecord(id, objective, { status, rung: 2, epochsTrained: 9 });
}

async function setUp(trials: TrialRecord[], continuing: Set<number>) {
  const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-persistence-'));
  const doc = { format: 'rungwise-study', version: 3, name: 'p', goal: { metric: 'accuracy', better: 'higher' }, state: 'running', trials } as unknown as StudyDocument;
  const store = await StudyStore.create(dir, doc);
  const checkpoints = new MemoryCheckpointStore();
  for (const t of trials) await checkpoints.write(t.id, new Uint8Array([t.id]));
  const sampler: Sampler = { next: () => 'done', report: () => undefined, mayContinue: (id) => continuing.has(id) };
  const announced: number[] = [];
  const persistence = new BatchedPersistence<number>(store, new CheckpointKeeper(checkpoints), sampler, (items) => announced.push(...items), trials.map((t) => t.id));
  return { doc, checkpoints, persistence, announced };
}

describe('saving and pruning', () => {
  it('keeps the checkpoint of a trial that is fourth only because an active trial ranks above it, and deletes it once it cannot rise', async () => {
    // Trial 0 is paused at the top of the ranking and will be continued; trials 1-3 are stopped below it.
    const continuing = new Set([0]);
    const { doc, checkpoints, persistence } = await setUp(
      [trial(0, 'waiting', 0.9), trial(1, 'dropped', 0.8), trial(2, 'dropped', 0.7), trial(3, 'dropped', 0.6), trial(4, 'dropped', 0.5)],
      continuing,
    );
    persistence.queue(1);
    await persistence.flush();
    expect(await checkpoints.list()).toEqual([0, 1, 2, 3]);
    // Its continuation diverges: it leaves the ranking and trial 3 rises to third.
    doc.trials[0]!.status = 'diverged';
    doc.trials[0]!.score = null;
    continuing.delete(0);
    persistence.queue(2);
    await persistence.flush();
    expect(await checkpoints.list()).toEqual([1, 2, 3]);
  });

  it('announces each item once, after the save that holds it', async () => {
    const { persistence, announced } = await setUp([trial(0, 'dropped', 0.9)], new Set());
    persistence.queue(10);
    persistence.queue(11);
    await persistence.flush();
    persistence.queue(12);
    await persistence.flush();
    expect(announced).toEqual([10, 11, 12]);
  });
});
