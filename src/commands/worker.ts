import { availableParallelism } from 'node:os';
import { QueueWorker } from '../transports/redis/worker.js';
import { ThreadTransport, type FaultInjector } from '../transports/threads/transport.js';

export interface WorkerCommandOptions {
  /** `redis://[:password@]HOST:PORT/DB` or `rediss://...`. */
  url: string;
  /** Jobs trained at once. @default available cores */
  threads?: number;
  /** Seconds after which a job whose worker stopped renewing its lock is taken back. */
  stallSeconds?: number;
  /** Where the worker says what it does. @default process.stderr */
  stderr?: NodeJS.WritableStream;
  /** Aborting stops the worker: running jobs are handed back to the queue. */
  signal: AbortSignal;
  /** Test-only: faults to inject into the jobs it trains (see `runner/faults.ts`). @default none */
  faults?: FaultInjector;
}

/** `rungwise worker`: train jobs of every study on a Redis until the signal aborts; returns the jobs trained. */
export async function worker(options: WorkerCommandOptions): Promise<{ jobsDone: number }> {
  const stderr = options.stderr ?? process.stderr;
  const threads = options.threads ?? availableParallelism();
  const queueWorker = new QueueWorker({
    url: options.url,
    threads,
    transport: new ThreadTransport({ threads, ...(options.faults ? { faults: options.faults } : {}) }),
    ...(options.stallSeconds !== undefined ? { stallSeconds: options.stallSeconds } : {}),
    onNote: (message) => stderr.write(`${message}\n`),
  });
  stderr.write(`worker ${queueWorker.name}: ${threads} thread(s), taking jobs from ${queueWorker.display}\n`);
  await queueWorker.start();
  await new Promise<void>((resolve) => {
    if (options.signal.aborted) resolve();
    else options.signal.addEventListener('abort', () => resolve(), { once: true });
  });
  stderr.write(`worker ${queueWorker.name}: stopping; running jobs go back to the queue\n`);
  await queueWorker.stop();
  stderr.write(`worker ${queueWorker.name}: stopped after ${queueWorker.jobsDone} job(s)\n`);
  return { jobsDone: queueWorker.jobsDone };
}
