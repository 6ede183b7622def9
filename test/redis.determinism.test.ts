/**
 * Where a job runs does not change what it computes: random search, successive halving and
 * Hyperband give identical trials (configurations, curves, objectives) and ranking on 2 local
 * threads, on the coordinator with 1 local thread and 1 remote worker process, and on 3 remote
 * worker processes. (Asynchronous halving promotes by arrival order, so it may differ, as it does
 * between local thread counts.)
 */
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runStudy } from '../src/runner/run-study.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { queuedStudy } from '../src/transports/redis/study.js';
import { spawnWorker, startRedis, stopStarted, type TestRedis } from './helpers/redis-server.js';
import { studyOutcome } from './helpers/study-outcome.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

const samplers: [string, NonNullable<StudyDefinitionInput['sampler']>, number][] = [
  ['random search', { kind: 'random', seed: 21 }, 6],
  ['successive halving', { kind: 'successive-halving', eta: 3, minEpochs: 1, seed: 22 }, 9],
  ['Hyperband', { kind: 'hyperband', eta: 3, minEpochs: 1, seed: 23 }, 9],
];

describe('the same study on local threads and on remote workers', () => {
  let oneWorker: TestRedis;
  let threeWorkers: TestRedis;

  beforeAll(async () => {
    oneWorker = await startRedis();
    threeWorkers = await startRedis();
    const ready = [spawnWorker(oneWorker.url, ['--threads', '1']), ...[1, 2, 3].map(() => spawnWorker(threeWorkers.url, ['--threads', '1']))];
    await Promise.all(ready.map((w) => w.printed(/taking jobs from/)));
  });
  afterAll(stopStarted);

  it.each(samplers)('%s gives identical trials and ranking everywhere', async (_name, sampler, trials) => {
    const definition = tinyStudy({ name: `same-${sampler.kind}`, budget: { trials, maxEpochs: 3 }, sampler, threads: 2 });
    const file = await writeTinyStudy(definition);
    const base = path.dirname(file);
    const local = path.join(base, 'local');
    await runStudy(file, { out: local, threads: 2 });
    const mixed = path.join(base, 'mixed');
    const mixedRun = await runStudy(file, { out: mixed, transport: queuedStudy({ url: oneWorker.url, studyName: definition.name, runDir: mixed, fresh: true, threads: 1 }).transport });
    const remote = path.join(base, 'remote');
    const remoteRun = await runStudy(file, { out: remote, transport: queuedStudy({ url: threeWorkers.url, studyName: definition.name, runDir: remote, fresh: true }).transport });

    const expected = await studyOutcome(local);
    expect(expected.state).toBe('finished');
    expect(await studyOutcome(mixed)).toEqual(expected);
    expect(await studyOutcome(remote)).toEqual(expected);
    // The comparison means something: the jobs did run elsewhere.
    const places = (doc: typeof mixedRun.doc) => new Set(doc.trials.flatMap((t) => t.jobs.map((j) => j.ranOn)));
    expect([...places(mixedRun.doc)].some((p) => p?.startsWith('thread'))).toBe(true);
    expect([...places(mixedRun.doc)].some((p) => p?.includes('/'))).toBe(true);
    expect([...places(remoteRun.doc)].every((p) => p?.includes('/'))).toBe(true);
    // The time per row is measured by the worker's thread and comes back in the result (queue protocol 6).
    for (const trial of remoteRun.doc.trials.filter((t) => t.status !== 'diverged')) expect(trial.rowMicroseconds).toBeGreaterThan(0);
  });

  it('successive halving with 3 folds: the k fold data sets are published and the trials are the local ones', async () => {
    const base = tinyStudy();
    const definition = tinyStudy({
      name: 'same-folds',
      data: { ...base.data, folds: 3 },
      budget: { trials: 9, maxEpochs: 3 },
      sampler: { kind: 'successive-halving', eta: 3, minEpochs: 1, seed: 24 },
      threads: 2,
    });
    const file = await writeTinyStudy(definition);
    const local = path.join(path.dirname(file), 'local');
    await runStudy(file, { out: local, threads: 2 });
    const remote = path.join(path.dirname(file), 'remote');
    const remoteRun = await runStudy(file, { out: remote, transport: queuedStudy({ url: threeWorkers.url, studyName: definition.name, runDir: remote, fresh: true }).transport });
    const expected = await studyOutcome(local);
    expect(expected.state).toBe('finished');
    expect(await studyOutcome(remote)).toEqual(expected);
    expect(remoteRun.doc.trials.every((t) => t.scoreStandardError !== undefined)).toBe(true);
    // The first fold's worker thread times the network.
    expect(remoteRun.doc.trials.every((t) => t.status === 'diverged' || t.rowMicroseconds! > 0)).toBe(true);
    expect(remoteRun.doc.trials.flatMap((t) => t.jobs.map((j) => j.ranOn)).every((p) => p?.includes('/'))).toBe(true);
  });
});
