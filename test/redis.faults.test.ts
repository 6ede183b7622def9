/**
 * A study served over a real Redis to real `rungwise worker` processes, with the faults of many
 * machines: a worker killed mid-job, the coordinator killed, Redis restarted empty or gone for good.
 * Every study must end with the trials and ranking of the same study run on local threads.
 * `RUNGWISE_FAULT=<trial>:hang:1` makes a worker's first run of that trial's job hang, so "mid-job"
 * does not depend on timing.
 */
import path from 'node:path';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { runStudy } from '../src/runner/run-study.js';
import { StudyStore } from '../src/store/study-store.js';
import { queuedStudy } from '../src/transports/redis/study.js';
import { runCli } from './helpers/cli.js';
import { spawnCli, spawnWorker, startRedis, stopStarted, type TestRedis, type WorkerProcess } from './helpers/redis-server.js';
import { studyOutcome } from './helpers/study-outcome.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

/** Resolves once `count` finished-trial lines have been printed. */
const trialLines = (process: WorkerProcess, count: number) => process.printed(new RegExp(`(\\[\\d+/\\d+ jobs[^\\]]*\\] trial [^\\n]*\\n[^]*){${count}}`));

describe('a study over Redis survives the faults of many machines', () => {
  // Successive halving, so jobs after the first rung continue from checkpoints that cross Redis.
  const definition = tinyStudy({ budget: { trials: 9, maxEpochs: 3 }, sampler: { kind: 'successive-halving', eta: 3, minEpochs: 1, seed: 5 }, threads: 2 });
  let studyFile: string;
  let base: string;
  let reference: Awaited<ReturnType<typeof studyOutcome>>;
  let redis: TestRedis;

  beforeAll(async () => {
    studyFile = await writeTinyStudy(definition);
    base = path.dirname(studyFile);
    await runStudy(studyFile, { out: path.join(base, 'reference'), threads: 2 });
    reference = await studyOutcome(path.join(base, 'reference'));
  });
  afterEach(stopStarted);
  afterAll(stopStarted);

  it('a worker killed in the middle of a job: another worker takes the job up after the stall time and the study ends as a local run', async () => {
    redis = await startRedis();
    const dir = path.join(base, 'worker-killed');
    const first = spawnWorker(redis.url, ['--threads', '1'], { RUNGWISE_FAULT: '4:hang:1' });
    const served = queuedStudy({ url: redis.url, studyName: definition.name, runDir: dir, fresh: true });
    const study = runStudy(studyFile, { out: dir, transport: served.transport });
    await first.printed(/trial 4, epochs 1\.\.1/);
    first.child.kill('SIGKILL');
    await first.exited;
    const second = spawnWorker(redis.url, ['--threads', '1']);
    const outcome = await study;
    expect(outcome.doc.state).toBe('finished');
    expect(await studyOutcome(dir)).toEqual(reference);
    const secondName = `/${second.child.pid}`;
    expect(outcome.doc.trials.find((t) => t.id === 4)!.jobs[0]!.ranOn).toMatch(new RegExp(`${secondName}$`));
    // Jobs past the first rung started from checkpoints carried through Redis.
    expect(outcome.doc.trials.some((t) => t.jobs.some((j) => j.fromCheckpoint && j.fromEpoch > 0))).toBe(true);
  });

  it('a worker stopped with SIGTERM hands its running job back, and another worker takes it without waiting for a stall', async () => {
    redis = await startRedis();
    const dir = path.join(base, 'worker-stopped');
    // A stall time far beyond the test's timeout: only a handed-back job can be taken up in time.
    const first = spawnWorker(redis.url, ['--threads', '1', '--stall-seconds', '3600'], { RUNGWISE_FAULT: '3:hang:1' });
    const served = queuedStudy({ url: redis.url, studyName: definition.name, runDir: dir, fresh: true });
    const study = runStudy(studyFile, { out: dir, transport: served.transport });
    await first.printed(/trial 3, epochs 1\.\.1/);
    first.child.kill('SIGTERM');
    expect(await first.exited).toEqual({ code: 0, signal: null });
    expect(first.output()).toMatch(/stopping; running jobs go back to the queue/);
    spawnWorker(redis.url, ['--threads', '1', '--stall-seconds', '3600']);
    expect((await study).doc.state).toBe('finished');
    expect(await studyOutcome(dir)).toEqual(reference);
  });

  it('the coordinator killed: resume --queue continues with the worker still attached, losing no finished trial and counting none twice', async () => {
    redis = await startRedis();
    const dir = path.join(base, 'coordinator-killed');
    spawnWorker(redis.url, ['--threads', '2']);
    const coordinator = spawnCli(['run', studyFile, '--out', dir, '--queue', redis.url]);
    await trialLines(coordinator, 3);
    coordinator.child.kill('SIGKILL');
    await coordinator.exited;
    const saved = (await StudyStore.open(dir)).doc.trials.filter((t) => t.status === 'trained' || t.status === 'waiting');
    const resumed = await runCli(['resume', dir, '--queue', redis.url]);
    expect(resumed.code).toBe(0);
    const after = await studyOutcome(dir);
    expect(after).toEqual(reference);
    for (const trial of saved) expect(after.trials.find((t) => t.id === trial.id)!.epochs).toBeGreaterThanOrEqual(trial.epochsTrained);
  });

  it('Redis restarted empty in the middle of a study: both sides reconnect, jobs in flight run again, the study ends as a local run', async () => {
    redis = await startRedis();
    const dir = path.join(base, 'redis-restarted');
    const worker = spawnWorker(redis.url, ['--threads', '2'], { RUNGWISE_FAULT: '2:hang:1' });
    const coordinator = spawnCli(['run', studyFile, '--out', dir, '--queue', redis.url]);
    await worker.printed(/trial 2, epochs 1\.\.1/);
    await redis.stop();
    await coordinator.printed(/unreachable; waiting up to 120 s/);
    await redis.start();
    const { code } = await coordinator.exited;
    expect(code).toBe(0);
    expect(coordinator.output()).toMatch(/is reachable again/);
    expect(coordinator.output()).toMatch(/job t2-f0-e1-d[0-9A-Za-z]+ is no longer on Redis/);
    expect(await studyOutcome(dir)).toEqual(reference);
  });

  it('Redis gone for good: the coordinator waits, then saves the study and exits 1 with its resume command; the resume finishes it', async () => {
    redis = await startRedis();
    const dir = path.join(base, 'redis-gone');
    const display = `redis://127.0.0.1:${redis.port}/0`;
    const worker = spawnWorker(redis.url, ['--threads', '2'], { RUNGWISE_FAULT: '2:hang:1' });
    const coordinator = spawnCli(['run', studyFile, '--out', dir, '--queue', redis.url, '--queue-wait-seconds', '2']);
    await worker.printed(/trial 2, epochs 1\.\.1/);
    await redis.stop();
    const { code } = await coordinator.exited;
    expect(code).toBe(1);
    expect(coordinator.output()).toMatch(/Redis at .* is unreachable; waiting up to 2 s for it/);
    expect(coordinator.output()).toContain(`error: Redis at ${display} stayed unreachable; the study is saved; continue it with: rungwise resume ${dir} --queue ${display}\n`);
    expect((await StudyStore.open(dir)).doc.state).toBe('interrupted');

    await redis.start();
    const resumed = await runCli(['resume', dir, '--queue', redis.url]);
    expect(resumed.code).toBe(0);
    expect(await studyOutcome(dir)).toEqual(reference);
  });

  it('a second coordinator on the same study directory is refused', async () => {
    redis = await startRedis();
    const dir = path.join(base, 'two-coordinators');
    const first = spawnCli(['run', studyFile, '--out', dir, '--queue', redis.url]);
    await first.printed(/no worker attached/);
    const second = await runCli(['resume', dir, '--queue', redis.url]);
    expect(second.code).toBe(2);
    expect(second.stderr).toMatch(/^error: .*: the study is in use by process \d+/m);
  });
});
