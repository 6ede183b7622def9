/**
 * Everything read back from Redis is checked before it is used: a malformed worker registry entry
 * is skipped with one line naming it, a job with a batch size of 0 or -5 or data that is not JSON
 * fails with the reason (never trains, never spins), a data set whose header disagrees with its
 * values or whose checksum is not the published one is refused, a malformed result is refused and
 * the job trained again, and an entry found on the queue that is not the coordinator's is
 * replaced with a warning. Real redis-server; workers train with the closed-form transport.
 */
import { createHash } from 'node:crypto';
import { Queue } from 'bullmq';
import { describe, expect, it } from 'vitest';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { ClosedFormTransport } from '../src/transports/closed-form.js';
import { RedisTransport } from '../src/transports/redis/coordinator.js';
import { datasetChecksum, decodeDataset, encodeDataset } from '../src/transports/redis/dataset.js';
import { encodeJob, keys, KEY_PREFIX, queueJobId, QUEUE_PROTOCOL_VERSION } from '../src/transports/redis/protocol.js';
import { parseRedisUrl } from '../src/transports/redis/url.js';
import { QueueWorker } from '../src/transports/redis/worker.js';
import type { TrialTransport } from '../src/transports/transport.js';
import type { TrainJob, TrainResult } from '../src/core/job.js';
import { irisDataset, SMALL_CONFIGURATION, useRedisSuite } from './helpers/redis-suite.js';


const configuration: TrialConfiguration = SMALL_CONFIGURATION;
const job = (trialId: number, changes: Partial<TrialConfiguration> = {}): TrainJob => ({
  trialId,
  seed: trialId,
  configuration: { ...configuration, ...changes },
  datasetId: 'iris',
  fromEpoch: 0,
  toEpoch: 2,
});
const closedForm = () => new ClosedFormTransport({ evaluate: (_p, epoch, trialId) => ({ validationLoss: 1 / (epoch + trialId) }), capacity: 2 });

/** Poll until `check` gives a value (the state lives in Redis; events can be missed while subscribing). */
async function until<T>(check: () => Promise<T | undefined> | T | undefined): Promise<T> {
  for (;;) {
    const value = await check();
    if (value !== undefined) return value;
    await new Promise((resolve) => setTimeout(resolve, 50));
  }
}

/** A data-set message rebuilt with its header changed (and a valid checksum, as an attacker would write it). */
function withHeader(bytes: Buffer, change: (header: Record<string, unknown>) => void): Buffer {
  const length = bytes.readUInt32LE(4);
  const header = JSON.parse(bytes.toString('utf8', 8, 8 + length)) as Record<string, unknown>;
  change(header);
  const json = Buffer.from(JSON.stringify(header));
  const padded = Buffer.alloc(json.length + ((4 - (json.length % 4)) % 4));
  json.copy(padded);
  const valuesStart = 8 + length + ((4 - (length % 4)) % 4);
  const prefix = Buffer.alloc(8);
  prefix.write('RWDS', 0, 'ascii');
  prefix.writeUInt32LE(json.length, 4);
  const body = Buffer.concat([prefix, padded, bytes.subarray(valuesStart, bytes.length - 32)]);
  return Buffer.concat([body, createHash('sha256').update(body).digest()]);
}

describe('queue entries are checked at the boundary', () => {
  const suite = useRedisSuite('boundary', { client: true });

  function coordinator(queue: string, notes: string[] = [], fresh = true): RedisTransport {
    const transport = new RedisTransport({ url: suite.redis.url, queue, fresh, onNote: (m) => notes.push(m) });
    suite.closers.push(() => transport.close());
    return transport;
  }

  async function worker(notes: string[] = [], transport: TrialTransport = closedForm()): Promise<QueueWorker> {
    const w = new QueueWorker({ url: suite.redis.url, threads: 1, transport, name: 'boundary-host/1', onNote: (m) => notes.push(m) });
    suite.closers.push(() => w.stop());
    await w.start();
    return w;
  }

  it('skips a worker registry entry with a thread count of 1abc with one line naming it, and goes on with the valid workers', async () => {
    await suite.client.zadd(keys.workers, Date.now() + 60_000, 'forged-host/7');
    await suite.client.hset(keys.workerInfo, 'forged-host/7', `{"protocol":${QUEUE_PROTOCOL_VERSION},"threads":"1abc","name":"forged-host/7"}`);
    await suite.client.zadd(keys.workers, Date.now() + 60_000, 'garbled-host/8');
    await suite.client.hset(keys.workerInfo, 'garbled-host/8', '{threads: 1abc');
    suite.closers.push(async () => void (await suite.client.zrem(keys.workers, 'forged-host/7', 'garbled-host/8')));
    const notes: string[] = [];
    const transport = coordinator(suite.nextQueue(), notes);
    await transport.addDataset(irisDataset());
    await worker();
    const result = await transport.run(job(1), () => undefined, new AbortController().signal);
    expect(result.status).toBe('completed');
    await until(() => (notes.some((m) => m.startsWith('worker registry entry garbled-host/8')) ? true : undefined));
    expect(notes.filter((m) => m.startsWith('worker registry entry forged-host/7'))).toEqual(['worker registry entry forged-host/7 ignored: threads: Invalid input: expected number, received string']);
    expect(notes.filter((m) => m.startsWith('worker registry entry garbled-host/8'))).toEqual(['worker registry entry garbled-host/8 ignored: not valid JSON']);
    expect(transport.refused.workers).toBe(2);
    expect(transport.capacity).toBe(1); // the one valid worker's thread; the forged entries count for nothing
  });

  it.each([0, -5])('fails a job with a batch size of %i with the reason, which the coordinator gets, and trains nothing', async (batchSize) => {
    const transport = coordinator(suite.nextQueue());
    await transport.addDataset(irisDataset());
    const w = await worker();
    const run = transport.run(job(2, { batchSize }), () => undefined, new AbortController().signal);
    await expect(run).rejects.toThrow(/^job t2-f0-e2-diris of study queue boundary-\d+ refused: job\.configuration\.batchSize: Too small: expected number to be >=1$/);
    expect(w.jobsDone).toBe(0);
    expect(w.jobsRefused).toBe(1);
  });

  it('fails a job whose data is not valid JSON instead of leaving it neither done nor failed', async () => {
    const queue = suite.nextQueue();
    const producer = new Queue(queue, { connection: parseRedisUrl(suite.redis.url).options, prefix: KEY_PREFIX });
    suite.closers.push(() => producer.close());
    await producer.add('train', { placeholder: true }, { jobId: 'not-json', attempts: 1 });
    await suite.client.hset(`${KEY_PREFIX}:${queue}:not-json`, 'data', '{"protocol":4,"job":');
    const notes: string[] = [];
    const w = await worker(notes);
    await suite.client.hset(keys.studyProtocols, queue, String(QUEUE_PROTOCOL_VERSION)); // the worker attaches now
    suite.closers.push(async () => void (await suite.client.hdel(keys.studyProtocols, queue)));
    const state = await until(async () => {
      const s = await producer.getJobState('not-json');
      return s === 'failed' || s === 'completed' ? s : undefined;
    });
    expect(state).toBe('failed');
    const failed = await suite.client.hget(`${KEY_PREFIX}:${queue}:not-json`, 'failedReason');
    expect(failed).toBe(`job not-json of study queue ${queue} refused: its data is not valid JSON`);
    expect(notes).toContain(failed);
    expect(w.jobsRefused).toBe(1);
  });

  it('refuses a data set whose header does not match its values, a label that is no class, and one that is not the data set its coordinator published', () => {
    const bytes = encodeDataset(irisDataset());
    // 120 training rows announced for 100 rows of values: reading would run past the values supplied.
    const moreRows = withHeader(bytes, (h) => ((h.splits as { rows: number }[])[0]!.rows = 120));
    expect(() => decodeDataset(moreRows, 'iris')).toThrow('data set iris from Redis refused: header splits.0.x: 400 values, expected rows x inputCount = 480');
    const moreInputs = withHeader(bytes, (h) => (h.inputCount = 5));
    expect(() => decodeDataset(moreInputs, 'iris')).toThrow(/refused: header splits\.0\.x: 400 values, expected rows x inputCount = 500$/);
    const twoClasses = withHeader(bytes, (h) => (h.outputCount = 2));
    expect(() => decodeDataset(twoClasses, 'iris')).toThrow('data set iris from Redis refused: validation row 1: label 2 is not a class index from 0 to 1');
    const other = encodeDataset({ ...irisDataset(), validation: { ...irisDataset().validation, x: irisDataset().validation.x.map((v) => v + 1) } });
    expect(() => decodeDataset(other, 'iris', datasetChecksum(bytes))).toThrow(/refused: its SHA-256 is not the one its coordinator published/);
    expect(decodeDataset(bytes, 'iris', datasetChecksum(bytes)).train.rows).toBe(100);
  });

  it('a data set replaced on Redis fails the job with the reason instead of training on it', async () => {
    const transport = coordinator(suite.nextQueue());
    await transport.addDataset(irisDataset());
    const replaced = encodeDataset({ ...irisDataset(), train: { ...irisDataset().train, y: irisDataset().train.y.map(() => 0) } });
    await suite.client.set(keys.dataset('iris'), replaced);
    const w = await worker();
    await expect(transport.run(job(3), () => undefined, new AbortController().signal)).rejects.toThrow(/data set iris from Redis refused: its SHA-256 is not the one its coordinator published/);
    expect(w.jobsDone).toBe(0);
  });

  it('refuses a malformed result and trains the job again, and fails it with the reason after three refusals', async () => {
    /** A worker whose trainer brings back a result of a status no trainer gives. */
    const odd: TrialTransport = {
      capacity: 1,
      addDataset: async () => undefined,
      run: async (j): Promise<TrainResult> => ({ trialId: j.trialId, status: 'finished' as TrainResult['status'], epochs: [], workerSeconds: 0 }),
      close: async () => undefined,
    };
    const notes: string[] = [];
    const transport = coordinator(suite.nextQueue(), notes);
    await transport.addDataset(irisDataset());
    await worker([], odd);
    await expect(transport.run(job(4), () => undefined, new AbortController().signal)).rejects.toThrow(
      /^job t4-f0-e2-diris: its result was refused 3 times \(result\.status: Invalid option: expected one of "completed"\|"diverged"\)$/,
    );
    expect(transport.refused.results).toBeGreaterThanOrEqual(3);
    expect(notes.some((m) => /^result of job t4-f0-e2-diris refused \(stored on the queue\): result\.status/.test(m))).toBe(true);
  });

  it('warns about a malformed entry found on the queue when a study resumes, and puts its own job in its place', async () => {
    const queue = suite.nextQueue();
    const producer = new Queue(queue, { connection: parseRedisUrl(suite.redis.url).options, prefix: KEY_PREFIX });
    suite.closers.push(() => producer.close());
    const id = queueJobId(job(5));
    const forged = encodeJob(job(5, { batchSize: 0 }), '0'.repeat(64));
    await producer.add('train', forged, { jobId: id, attempts: 1 });
    const notes: string[] = [];
    const transport = coordinator(queue, notes, false);
    await transport.addDataset(irisDataset());
    const running = transport.run(job(5), () => undefined, new AbortController().signal);
    await until(() => (notes.some((m) => m.startsWith(`job ${id} found on the queue`)) ? true : undefined));
    await worker();
    expect((await running).status).toBe('completed');
    expect(notes).toContain(`job ${id} found on the queue was not the coordinator's (job.configuration.batchSize: Too small: expected number to be >=1); putting the coordinator's job in its place`);
    expect(transport.refused.jobs).toBe(1);
  });
});
