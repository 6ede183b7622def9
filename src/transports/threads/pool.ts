import { existsSync } from 'node:fs';
import { MessageChannel } from 'node:worker_threads';
import { fileURLToPath, pathToFileURL } from 'node:url';
import path from 'node:path';
import { Piscina } from 'piscina';
import type { EpochReport, TrainResult } from '../../core/job.js';
import type { ThreadTrainRequest } from './messages.js';

export interface TrialPoolOptions {
  /** Worker threads. */
  threads: number;
  /** Thread entry point; default: the compiled `dist/threads/trial-thread.js`. */
  threadFile?: string;
}

/** A compiled file of `dist/threads/`, whether this module runs from `dist/` or from source under a test runner. */
function compiledThreadFile(name: string): string {
  const here = path.dirname(fileURLToPath(import.meta.url));
  const candidates = [
    path.resolve(here, '../../../threads', name), // dist/src/transports/threads -> dist/threads
    path.resolve(here, '../../../dist/threads', name), // src/transports/threads -> dist/threads
  ];
  const found = candidates.find((file) => existsSync(file));
  if (!found) throw new Error(`${name} not found (looked at ${candidates.join(', ')}); run \`npm run build\``);
  return found;
}

/** The compiled thread entry point. */
export function defaultThreadFile(): string {
  return compiledThreadFile('trial-thread.js');
}

/** A fixed-size pool of trial threads; each task trains one job and streams its epoch reports. */
export class TrialPool {
  private readonly piscina: Piscina;
  readonly threads: number;

  constructor(options: TrialPoolOptions) {
    if (!Number.isInteger(options.threads) || options.threads < 1) {
      throw new Error(`options.threads must be a positive integer, got ${options.threads}`);
    }
    this.threads = options.threads;
    const threadFile = options.threadFile ?? defaultThreadFile();
    this.piscina = new Piscina({
      // Piscina would require() the ES-module worker first, which can abort Node 20 (see
      // threads/esm-entry.cts); the CommonJS entry imports it instead.
      filename: compiledThreadFile('esm-entry.cjs'),
      workerData: { entry: pathToFileURL(path.resolve(threadFile)).href },
      minThreads: options.threads,
      maxThreads: options.threads,
      // Every worker is busy or about to be; never queue more than one job per worker.
      maxQueue: options.threads,
      idleTimeout: 60_000,
      // A worker keeps its data tensors between trials; one task at a time per thread.
      concurrentTasksPerWorker: 1,
    });
    // A worker's reply that crosses an abort of its task (a fold's sibling failed, a study stopped)
    // arrives for a task piscina has already dropped; piscina reports it as an 'error' event, which
    // unheard would end the process. The task was settled by the abort; the late reply is dropped.
    this.piscina.on('error', (error: unknown) => {
      if (error instanceof Error && error.message.startsWith('Unexpected message from Worker')) return;
      throw error;
    });
  }

  /**
   * Train one job. Resolves with the worker's result; rejects when the worker throws, dies,
   * or `signal` aborts (the worker thread is then ended and replaced).
   */
  async run(request: Omit<ThreadTrainRequest, 'progressPort'>, onEpoch: (report: EpochReport) => void, signal?: AbortSignal): Promise<TrainResult> {
    const channel = new MessageChannel();
    let lastEpoch = request.fromEpoch;
    const deliver = (report: EpochReport): void => {
      if (report.epoch <= lastEpoch) return;
      lastEpoch = report.epoch;
      onEpoch(report);
    };
    channel.port1.on('message', deliver);
    try {
      const task: ThreadTrainRequest = { ...request, progressPort: channel.port2 };
      const result = (await this.piscina.run(task, { transferList: [channel.port2], ...(signal ? { signal } : {}) })) as TrainResult;
      // The result and the reports travel on different ports, so the last reports may still be on
      // their way when a fast job resolves: they are delivered from the result, in order, once.
      for (const report of result.epochs) deliver(report);
      return result;
    } finally {
      channel.port1.close();
    }
  }

  async close(): Promise<void> {
    await this.piscina.close({ force: true });
  }
}
