/**
 * Signed jobs and results with a study key (HMAC-SHA-256), against a real redis-server: a forged
 * completion event, a result without the signature or under another key, and a job injected
 * without the coordinator's signature (or moved from another job id) are refused and counted;
 * without a key a forged completion is taken, as the README's trust model says.
 */
import { Queue } from 'bullmq';
import { describe, expect, it } from 'vitest';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { ClosedFormTransport } from '../src/transports/closed-form.js';
import { RedisTransport } from '../src/transports/redis/coordinator.js';
import { encodeJob, encodeResult, keys, KEY_PREFIX, QUEUE_PROTOCOL_VERSION } from '../src/transports/redis/protocol.js';
import { hmacSha256, loadStudyKey, StudyKey } from '../src/transports/redis/signing.js';
import { parseRedisUrl } from '../src/transports/redis/url.js';
import { QueueWorker } from '../src/transports/redis/worker.js';
import type { TrainJob } from '../src/core/job.js';
import { irisDataset, SMALL_CONFIGURATION, useRedisSuite } from './helpers/redis-suite.js';

describe('HMAC-SHA-256', () => {
  it('gives the published values of RFC 4231', () => {
    // Source: M. Nystrom, "Identifiers and Test Vectors for HMAC-SHA-224, HMAC-SHA-256, HMAC-SHA-384, and HMAC-SHA-512", RFC 4231, 2005, section 4.2 (Test Case 1) and 4.3 (Test Case 2); values from memory.
    expect(hmacSha256(Buffer.alloc(20, 0x0b), 'Hi There').toString('hex')).toBe('b0344c61d8db38535ca8afceaf0bf12b881dc200c9833da726e9376c2e32cff7');
    expect(hmacSha256(Buffer.from('Jefe'), 'what do ya want for nothing?').toString('hex')).toBe('5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843');
  });

  it('takes the key from the environment, refuses a short one in one line, and has none when nothing is set', () => {
    expect(loadStudyKey({ env: {} })).toBeUndefined();
    expect(loadStudyKey({ env: { RUNGWISE_STUDY_KEY: 'k'.repeat(32) } })).toBeInstanceOf(StudyKey);
    expect(() => loadStudyKey({ env: { RUNGWISE_STUDY_KEY: 'short' } })).toThrow(/^RUNGWISE_STUDY_KEY: the study key has 5 bytes; it needs at least 16/);
    expect(() => loadStudyKey({ keyFile: '/nonexistent/key' })).toThrow(/^--key-file \/nonexistent\/key: cannot be read \(ENOENT\)$/);
  });
});


const configuration: TrialConfiguration = SMALL_CONFIGURATION;
const job = (trialId: number): TrainJob => ({ trialId, seed: trialId, configuration, datasetId: 'iris', fromEpoch: 0, toEpoch: 2 });
const closedForm = () => new ClosedFormTransport({ evaluate: (_p, epoch, trialId) => ({ validationLoss: 1 / (epoch + trialId) }), capacity: 2 });
const studyKey = new StudyKey(Buffer.from('the study key of this test, 32 b'));
const otherKey = new StudyKey(Buffer.from('another key, never the study one'));

/** A completion as a writer to the server could forge it: an event with a result that claims a perfect score. */
function forgedCompletion(trialId: number): string {
  const epochs = [1, 2].map((epoch) => ({ trialId, epoch, trainLoss: 0, validationLoss: 0, metrics: { accuracy: 1 }, seconds: 0 }));
  return JSON.stringify(encodeResult({ trialId, status: 'completed', epochs, workerSeconds: 0, ranOn: 'forger/1' }));
}

async function until<T>(check: () => Promise<T | undefined> | T | undefined): Promise<T> {
  for (;;) {
    const value = await check();
    if (value !== undefined) return value;
    await new Promise((resolve) => setTimeout(resolve, 50));
  }
}

describe('signed jobs and results over a real Redis', () => {
  const suite = useRedisSuite('signed', { client: true });

  function coordinator(queue: string, key: StudyKey | undefined, notes: string[] = []): RedisTransport {
    const transport = new RedisTransport({ url: suite.redis.url, queue, fresh: true, ...(key ? { key } : {}), onNote: (m) => notes.push(m) });
    suite.closers.push(() => transport.close());
    return transport;
  }

  async function worker(key: StudyKey | undefined, notes: string[] = []): Promise<QueueWorker> {
    const w = new QueueWorker({ url: suite.redis.url, threads: 1, transport: closedForm(), name: 'signing-host/1', ...(key ? { key } : {}), onNote: (m) => notes.push(m) });
    suite.closers.push(() => w.stop());
    await w.start();
    return w;
  }

  /** Wait until the job is on the queue, then add a forged completion event for it to the queue's event stream. */
  async function forgeCompletion(queue: string, jobId: string, trialId: number): Promise<void> {
    await until(async () => ((await suite.client.exists(`${KEY_PREFIX}:${queue}:${jobId}`)) === 1 ? true : undefined));
    await suite.client.xadd(`${KEY_PREFIX}:${queue}:events`, '*', 'event', 'completed', 'jobId', jobId, 'returnvalue', forgedCompletion(trialId), 'prev', 'active');
  }

  it('with the key: a forged completion is refused and counted, and the study gets the result its worker trained and signed', async () => {
    const queue = suite.nextQueue();
    const notes: string[] = [];
    const transport = coordinator(queue, studyKey, notes);
    await transport.addDataset(irisDataset());
    const running = transport.run(job(1), () => undefined, new AbortController().signal);
    await forgeCompletion(queue, 't1-f0-e2-diris', 1);
    await until(() => (transport.refused.results > 0 ? true : undefined));
    await worker(studyKey);
    const result = await running;
    expect(result.ranOn).toBe('signing-host/1');
    expect(result.epochs.map((e) => e.validationLoss)).toEqual([1 / 2, 1 / 3]);
    expect(notes).toContain('result of job t1-f0-e2-diris refused (completion event): not signed; with a study key every worker must hold the same key; 1 result(s) refused so far');
  });

  it('without a key: a forged completion is taken (anyone who can write to the server can forge scores)', async () => {
    const queue = suite.nextQueue();
    const transport = coordinator(queue, undefined);
    await transport.addDataset(irisDataset());
    const running = transport.run(job(2), () => undefined, new AbortController().signal);
    await forgeCompletion(queue, 't2-f0-e2-diris', 2);
    const result = await running;
    expect(result.ranOn).toBe('forger/1');
    expect(result.epochs[1]!.metrics.accuracy).toBe(1);
  });

  it('with the key: unsigned results of a worker without the key are refused, and the job fails with the reason after three', async () => {
    const notes: string[] = [];
    const transport = coordinator(suite.nextQueue(), studyKey, notes);
    await transport.addDataset(irisDataset());
    await worker(undefined);
    await expect(transport.run(job(3), () => undefined, new AbortController().signal)).rejects.toThrow(/its result was refused 3 times \(not signed; with a study key every worker must hold the same key\)$/);
    expect(transport.refused.results).toBeGreaterThanOrEqual(3);
    expect(notes).toContain('worker signing-host/1 has no study key; its results will be refused (start it with the study\'s key in RUNGWISE_STUDY_KEY or --key-file)');
  });

  it('with the key: a completion signed under another key is refused; a worker under another key refuses the job, and the coordinator records why', async () => {
    const queue = suite.nextQueue();
    const transport = coordinator(queue, studyKey);
    await transport.addDataset(irisDataset());
    const running = transport.run(job(6), () => undefined, new AbortController().signal);
    const forged = JSON.parse(forgedCompletion(6)) as Record<string, unknown>;
    const signed = JSON.stringify({ ...forged, signature: otherKey.sign('result', queue, 't6-f0-e2-diris', forged) });
    await until(async () => ((await suite.client.exists(`${KEY_PREFIX}:${queue}:t6-f0-e2-diris`)) === 1 ? true : undefined));
    await suite.client.xadd(`${KEY_PREFIX}:${queue}:events`, '*', 'event', 'completed', 'jobId', 't6-f0-e2-diris', 'returnvalue', signed, 'prev', 'active');
    await until(() => (transport.refused.results > 0 ? true : undefined));
    await worker(otherKey);
    await expect(running).rejects.toThrow(`job t6-f0-e2-diris of study queue ${queue} refused: its signature does not match this worker's study key`);
  });

  it('a worker with the key refuses a job injected without the signature, under another key, or moved to another job id, and the coordinator records why', async () => {
    const queue = suite.nextQueue();
    const transport = coordinator(queue, studyKey);
    await transport.addDataset(irisDataset());
    const w = await worker(studyKey);
    // The coordinator's own job goes through.
    expect((await transport.run(job(4), () => undefined, new AbortController().signal)).status).toBe('completed');
    const producer = new Queue(queue, { connection: parseRedisUrl(suite.redis.url).options, prefix: KEY_PREFIX });
    suite.closers.push(() => producer.close());
    const checksum = (await suite.client.getBuffer(keys.dataset('iris')))!.subarray(-32).toString('hex');
    const entry = encodeJob(job(5), checksum);
    await producer.add('train', entry, { jobId: 'injected-unsigned', attempts: 1 });
    await producer.add('train', { ...entry, signature: otherKey.sign('job', queue, 'injected-other-key', entry) }, { jobId: 'injected-other-key', attempts: 1 });
    await producer.add('train', { ...entry, signature: studyKey.sign('job', queue, 't5-f0-e2-diris', entry) }, { jobId: 'moved', attempts: 1 });
    const reasons = await Promise.all(
      ['injected-unsigned', 'injected-other-key', 'moved'].map((id) =>
        until(async () => ((await producer.getJobState(id)) === 'failed' ? (await producer.getJob(id))!.failedReason : undefined)),
      ),
    );
    expect(reasons).toEqual([
      `job injected-unsigned of study queue ${queue} refused: it is not signed, and this worker has a study key (start the coordinator with the same key)`,
      `job injected-other-key of study queue ${queue} refused: its signature does not match this worker's study key`,
      `job moved of study queue ${queue} refused: its signature does not match this worker's study key`,
    ]);
    expect(w.jobsRefused).toBe(3);
    expect(w.jobsDone).toBe(1);
    expect(QUEUE_PROTOCOL_VERSION).toBe(6);
  });
});
