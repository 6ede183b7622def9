/** The Redis transport keeps the promises of every transport, with one real worker (1 thread) on a private redis-server. */
import { afterAll, beforeAll } from 'vitest';
import { RedisTransport } from '../src/transports/redis/coordinator.js';
import { QueueWorker } from '../src/transports/redis/worker.js';
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
