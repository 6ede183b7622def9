import { availableParallelism } from 'node:os';
import { UserError } from '../core/errors.js';
import { waitForRedis } from '../transports/redis/connect.js';
import { loadStudyKey } from '../transports/redis/signing.js';
import { DEFAULT_QUEUE_WAIT_SECONDS } from '../transports/redis/timing.js';
import { parseRedisUrl } from '../transports/redis/url.js';
import { QueueWorker } from '../transports/redis/worker.js';
import { ThreadTransport, type FaultInjector } from '../transports/threads/transport.js';

export interface WorkerCommandOptions {
  /** `redis://[:password@]HOST:PORT/DB` or `rediss://...`. */
  url: string;
  /** Jobs trained at once. @default available cores */
  threads?: number;
  /** Seconds after which a job whose worker stopped renewing its lock is taken back. */
  stallSeconds?: number;
  /** Seconds Redis may stay unreachable (at the start or later) before the worker ends with exit code 2. @default 120 */
  queueWaitSeconds?: number;
  /** A file whose first line is the Redis password (else the address's, else `RUNGWISE_REDIS_PASSWORD`). */
  passwordFile?: string;
  /** With `rediss://`: PEM file of the certificate authority of the server's certificate. */
  caFile?: string;
  /** A file holding the study key (else `RUNGWISE_STUDY_KEY`): only signed jobs are trained, results are signed. */
  keyFile?: string;
  /** Where the worker says what it does. @default process.stderr */
  stderr?: NodeJS.WritableStream;
  /** Aborting stops the worker: running jobs are handed back to the queue. */
  signal: AbortSignal;
  /** Test-only: faults to inject into the jobs it trains (see `runner/faults.ts`). @default none */
  faults?: FaultInjector;
}

/**
 * `rungwise worker`: wait for Redis, then train jobs of every study on it until the signal aborts;
 * returns the jobs trained.
 * @throws UserError (exit code 2) when Redis cannot be reached within the wait, or stays unreachable that long later
 */
export async function worker(options: WorkerCommandOptions): Promise<{ jobsDone: number; jobsRefused: number }> {
  const stderr = options.stderr ?? process.stderr;
  const threads = options.threads ?? availableParallelism();
  const waitSeconds = options.queueWaitSeconds ?? DEFAULT_QUEUE_WAIT_SECONDS;
  const address = parseRedisUrl(options.url, 'worker address', {
    ...(options.passwordFile !== undefined ? { passwordFile: options.passwordFile } : {}),
    ...(options.caFile !== undefined ? { caFile: options.caFile } : {}),
  });
  const key = loadStudyKey(options.keyFile !== undefined ? { keyFile: options.keyFile } : {});
  try {
    await waitForRedis(address, { waitSeconds, signal: options.signal, onNote: (message) => stderr.write(`${message}\n`) });
  } catch (error) {
    if ((error as Error).name === 'AbortError') return { jobsDone: 0, jobsRefused: 0 };
    throw error;
  }
  const lost = new AbortController();
  const queueWorker = new QueueWorker({
    url: address,
    threads,
    transport: new ThreadTransport({ threads, ...(options.faults ? { faults: options.faults } : {}) }),
    ...(options.stallSeconds !== undefined ? { stallSeconds: options.stallSeconds } : {}),
    ...(key ? { key } : {}),
    waitSeconds,
    onUnavailable: () => lost.abort(),
    onNote: (message) => stderr.write(`${message}\n`),
  });
  stderr.write(`worker ${queueWorker.name}: ${threads} thread(s), taking jobs from ${queueWorker.display}${key ? ', signed jobs only' : ''}\n`);
  const stop = AbortSignal.any([options.signal, lost.signal]);
  await Promise.race([queueWorker.start(), new Promise((resolve) => stop.addEventListener('abort', resolve, { once: true }))]);
  await new Promise<void>((resolve) => {
    if (stop.aborted) resolve();
    else stop.addEventListener('abort', () => resolve(), { once: true });
  });
  stderr.write(`worker ${queueWorker.name}: stopping; running jobs go back to the queue\n`);
  await queueWorker.stop();
  stderr.write(`worker ${queueWorker.name}: stopped after ${queueWorker.jobsDone} job(s)${queueWorker.jobsRefused > 0 ? `, ${queueWorker.jobsRefused} refused` : ''}\n`);
  if (lost.signal.aborted && !options.signal.aborted) {
    throw new UserError('E_QUEUE_UNREACHABLE', `Redis at ${address.display} stayed unreachable for ${waitSeconds} s; the worker stopped (--queue-wait-seconds sets how long it waits)`);
  }
  return { jobsDone: queueWorker.jobsDone, jobsRefused: queueWorker.jobsRefused };
}
