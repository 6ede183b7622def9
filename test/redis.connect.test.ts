/**
 * Reaching Redis, as real processes: a coordinator or worker whose Redis is unreachable at the start
 * tries again with backoff and ends after its deadline with one line and exit code 2 (nothing
 * written); SIGTERM ends it at once while it waits, and ends a worker whose Redis went down; a
 * worker whose Redis stays down past its deadline ends with exit code 2. Passwords come from a file
 * or the environment and never show; a broken escape is a one-line error; `rediss://` works against
 * a server with a self-signed certificate given by --ca-file, and is refused in one line without it.
 */
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, beforeAll, describe, expect, it } from 'vitest';
import { ClosedFormTransport } from '../src/transports/closed-form.js';
import { RedisTransport } from '../src/transports/redis/coordinator.js';
import { waitForRedis } from '../src/transports/redis/connect.js';
import { parseRedisUrl } from '../src/transports/redis/url.js';
import { QueueWorker } from '../src/transports/redis/worker.js';
import { runCli } from './helpers/cli.js';
import { spawnCli, spawnWorker, startRedis, stopStarted } from './helpers/redis-server.js';
import { writeTinyStudy } from './helpers/studies.js';

/** The error lines of a CLI's output. */
const errorLines = (text: string) => text.split('\n').filter((line) => line.startsWith('error:'));

/** An address where nothing listens: a private server's port after the server stopped. */
async function deadAddress(): Promise<string> {
  const redis = await startRedis();
  await redis.dispose();
  return redis.url;
}

describe('reaching Redis', () => {
  let studyFile: string;
  beforeAll(async () => {
    studyFile = await writeTinyStudy();
  });
  afterEach(stopStarted);

  it('a coordinator whose Redis is unreachable tries again, then ends after its deadline with one line and exit code 2, writing nothing', async () => {
    const url = await deadAddress();
    const out = path.join(path.dirname(studyFile), 'unreachable');
    const result = await runCli(['run', studyFile, '--out', out, '--queue', url, '--queue-wait-seconds', '1']);
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(/^Redis at redis:\/\/127\.0\.0\.1:\d+\/0 is not reachable \(ECONNREFUSED\); trying again with backoff for up to 1 s$/m);
    expect(errorLines(result.stderr)).toEqual([expect.stringMatching(/^error: Redis at redis:\/\/127\.0\.0\.1:\d+\/0 could not be reached in 1 s \(ECONNREFUSED\); check that redis-server runs there/)]);
    expect(existsSync(out)).toBe(false);
  });

  it('SIGTERM ends a coordinator waiting for Redis at once, and nothing is written', async () => {
    const url = await deadAddress();
    const out = path.join(path.dirname(studyFile), 'interrupted-wait');
    // The default deadline is 120 s, beyond the test's timeout: only the signal can end it in time.
    const coordinator = spawnCli(['run', studyFile, '--out', out, '--queue', url]);
    await coordinator.printed(/is not reachable/);
    coordinator.child.kill('SIGTERM');
    expect(await coordinator.exited).toEqual({ code: 130, signal: null });
    expect(coordinator.output()).toMatch(/interrupted before the first trial; nothing was written/);
    expect(existsSync(out)).toBe(false);
  });

  it('SIGTERM ends a worker at once while its Redis is down, and a worker whose Redis stays down past its deadline ends with exit code 2', async () => {
    const redis = await startRedis();
    const patient = spawnWorker(redis.url, ['--threads', '1']);
    const impatient = spawnWorker(redis.url, ['--threads', '1', '--queue-wait-seconds', '1']);
    await Promise.all([patient.printed(/taking jobs from/), impatient.printed(/taking jobs from/)]);
    await redis.stop();
    await patient.printed(/is unreachable; waiting for it/);
    patient.child.kill('SIGTERM');
    expect(await patient.exited).toEqual({ code: 0, signal: null });
    expect(await impatient.exited).toEqual({ code: 2, signal: null });
    expect(errorLines(impatient.output())).toEqual([expect.stringMatching(/^error: Redis at redis:\/\/127\.0\.0\.1:\d+\/0 stayed unreachable for 1 s; the worker stopped/)]);
  });

  it('a password from a file or the environment reaches a server that asks for one and is never printed; a wrong one ends at once with exit code 2', async () => {
    const secret = 'fil3-s3cret';
    const redis = await startRedis({ password: secret });
    const plain = `redis://127.0.0.1:${redis.port}/0`;
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-secret-'));
    const file = path.join(dir, 'password');
    await writeFile(file, `${secret}\n`);
    const fromFile = spawnWorker(plain, ['--threads', '1', '--password-file', file]);
    const fromEnv = spawnWorker(plain, ['--threads', '1'], { RUNGWISE_REDIS_PASSWORD: secret });
    await Promise.all([fromFile.printed(/taking jobs from/), fromEnv.printed(/taking jobs from/)]);
    fromFile.child.kill('SIGTERM');
    fromEnv.child.kill('SIGTERM');
    await Promise.all([fromFile.exited, fromEnv.exited]);
    expect(fromFile.output() + fromEnv.output()).not.toContain(secret);
    const wrong = await runCli(['worker', plain, '--queue-wait-seconds', '100'], { env: { RUNGWISE_REDIS_PASSWORD: 'not-it' } });
    expect(wrong.code).toBe(2);
    expect(errorLines(wrong.stderr)).toEqual([expect.stringMatching(/^error: Redis at redis:\/\/127\.0\.0\.1:\d+\/0: it refused the password/)]);
  });

  it('a broken escape in the address is one line and exit code 2, without echoing the password', async () => {
    const result = await runCli(['worker', 'redis://:pa%zzss@127.0.0.1:6379/0']);
    expect(result.code).toBe(2);
    expect(result.stderr).toBe("error: worker address: the password holds a '%' that is not followed by two hex digits; write '%' as %25 (or give the password in RUNGWISE_REDIS_PASSWORD or --password-file)\n");
    expect(() => parseRedisUrl('redis://:pa%zzss@host/0')).toThrow(/^--queue: the password holds a '%'/);
  });
});

describe('TLS (rediss://) against a server with a self-signed certificate', () => {
  afterEach(stopStarted);

  it('serves a job with --ca-file and refuses the connection in one line without it', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-tls-'));
    const certFile = path.join(dir, 'server.crt');
    const keyFile = path.join(dir, 'server.key');
    const made = spawnSync('openssl', ['req', '-x509', '-newkey', 'rsa:2048', '-nodes', '-days', '1', '-subj', '/CN=127.0.0.1', '-addext', 'subjectAltName=IP:127.0.0.1', '-keyout', keyFile, '-out', certFile], { encoding: 'utf8' });
    expect(made.status, made.stderr).toBe(0);
    const redis = await startRedis({ tls: { certFile, keyFile, caFile: certFile } });
    expect(redis.url).toMatch(/^rediss:\/\//);

    await expect(waitForRedis(parseRedisUrl(redis.url), { waitSeconds: 60 })).rejects.toThrow(/its TLS certificate was not accepted .*; give the certificate authority with --ca-file$/);

    const address = parseRedisUrl(redis.url, '--queue', { caFile: certFile });
    await waitForRedis(address, { waitSeconds: 60 });
    const transport = new RedisTransport({ url: address, queue: 'tls-test', fresh: true });
    const worker = new QueueWorker({ url: address, threads: 1, transport: new ClosedFormTransport({ evaluate: (_p, epoch) => ({ validationLoss: 1 / epoch }), capacity: 1 }) });
    try {
      const x = new Float32Array([0, 1, 1, 0]);
      await transport.addDataset({ id: 'tls', task: 'binary', inputCount: 1, outputCount: 1, train: { rows: 4, x, y: x }, validation: { rows: 4, x, y: x } });
      await worker.start();
      const configuration = { depth: 1, width: 2, activation: 'relu' as const, learningRate: 0.1, batchSize: 2, optimizer: 'adam' as const, l2: 0, dropout: 0 };
      const result = await transport.run({ trialId: 1, seed: 1, configuration, datasetId: 'tls', fromEpoch: 0, toEpoch: 2 }, () => undefined, new AbortController().signal);
      expect(result.epochs.map((e) => e.validationLoss)).toEqual([1, 1 / 2]);
    } finally {
      await worker.stop();
      await transport.close();
    }
    const cli = await runCli(['worker', redis.url, '--queue-wait-seconds', '100']);
    expect(cli.code).toBe(2);
    expect(errorLines(cli.stderr)).toEqual([expect.stringMatching(/its TLS certificate was not accepted/)]);
  });
});
