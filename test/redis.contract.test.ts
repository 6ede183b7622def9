/**
 * The Redis transport keeps the promises of every transport, with one real worker (1 thread) on a
 * private redis-server; so does the routed transport that sends to local threads first, then the queue.
 */
import { afterAll, beforeAll } from 'vitest';
import { RedisTransport } from '../src/transports/redis/coordinator.js';
import { QueueWorker } from '../src/transports/redis/worker.js';
import { RoutedTransport } from '../src/transports/routed.js';
import { ThreadTransport } from '../src/transports/threads/transport.js';
import { startRedis, stopStarted, type TestRedis } from './helpers/redis-server.js';
import { transportContract } from './transport.contract.js';

let redis: TestRedis;
let worker: QueueWorker;
let queues = 0;

beforeAll(async () => {
  redis = await startRedis();
  worker = new QueueWorker({ url: redis.url, threads: 1 });
  await worker.start();
});
afterAll(async () => {
  await worker.stop();
  await stopStarted();
});

transportContract('Redis queue, one worker', () => new RedisTransport({ url: redis.url, queue: `contract-${++queues}`, fresh: true }));
transportContract('routed: one local thread first, then the Redis queue', () =>
  new RoutedTransport(new ThreadTransport({ threads: 1 }), new RedisTransport({ url: redis.url, queue: `contract-${++queues}`, fresh: true })),
);
