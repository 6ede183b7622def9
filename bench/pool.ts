/**
 * Pool scaling: the same fixed set of small trials through `TrialPool` with one worker and with
 * every core. Thread start-up (and each thread's backend set-up and data upload) is timed apart.
 */
import { availableParallelism } from 'node:os';
import type { TrainRequest } from '../src/trainers/contract.js';
import type { TrainResult } from '../src/core/job.js';
import { TrialPool } from '../src/transports/threads/pool.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult } from './report.js';
import { benchDataset, sharedDataset } from './synthetic.js';

type Request = Omit<TrainRequest, 'progressPort'>;

/** Runs requests keeping at most `pool.threads` in flight, as the run loop does (the pool's queue is that short). */
export async function runAll(pool: TrialPool, requests: readonly Request[]): Promise<TrainResult[]> {
  const results: TrainResult[] = [];
  let next = 0;
  const lane = async (): Promise<void> => {
    while (next < requests.length) {
      const request = requests[next++]!;
      results.push(await pool.run(request, () => undefined));
    }
  };
  await Promise.all(Array.from({ length: pool.threads }, lane));
  return results;
}

interface ScalingRun {
  threads: number;
  startupSeconds: number;
  seconds: number;
  trialsPerSecond: number;
  /** CPU time of the whole process (every thread) over wall time while the trials ran: the cores actually obtained. */
  coresUsed: number;
}

export async function poolGroup(options: BenchOptions): Promise<GroupResult> {
  const trials = options.quick ? 8 : 12;
  const epochs = options.quick ? 2 : 5;
  const dataset = sharedDataset(benchDataset(options.quick ? 512 : 2048, 256));
  // 3x128: on the engine a trial lasts about 0.1-0.2 s, long enough that thread hand-offs do not dominate.
  const params: TrialConfiguration = { depth: 3, width: 128, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0 };
  const requests: Request[] = Array.from({ length: trials }, (_, i) => ({ trialId: i + 1, seed: 100 + i, configuration: params, dataset, datasetId: dataset.id, fromEpoch: 0, toEpoch: epochs }));
  const all = availableParallelism();
  const counts = all > 1 ? [1, all] : [1];
  const runs: ScalingRun[] = [];
  for (const threads of counts) {
    const started = performance.now();
    const pool = new TrialPool({ threads });
    try {
      // Warm-up: one one-epoch trial per thread starts every thread, its backend and its data cache.
      await Promise.all(Array.from({ length: threads }, (_, i) => pool.run({ ...requests[0]!, trialId: 1000 + i, toEpoch: 1 }, () => undefined)));
      const startupSeconds = (performance.now() - started) / 1000;
      const timed = performance.now();
      const cpu = process.cpuUsage();
      await runAll(pool, requests);
      const seconds = (performance.now() - timed) / 1000;
      const used = process.cpuUsage(cpu);
      runs.push({ threads, startupSeconds, seconds, trialsPerSecond: trials / seconds, coresUsed: (used.user + used.system) / 1e6 / seconds });
    } finally {
      await pool.close();
    }
  }
  const one = runs[0]!;
  const most = runs.at(-1)!;
  const speedup = most.trialsPerSecond / one.trialsPerSecond;
  return {
    group: 'pool',
    title: '2. Pool scaling (TrialPool)',
    tables: [
      {
        title: `${trials} trials of 3x128, batch 32, ${epochs} epochs on ${dataset.train.rows} rows, trained on the engine`,
        columns: ['threads', 'start-up + warm-up (s)', 'trials (s)', 'trials per second', 'speed-up', 'cores used (CPU time / wall)', 'trials per CPU-second'],
        rows: runs.map((r) => [r.threads, r.startupSeconds, r.seconds, r.trialsPerSecond, `${fmt(r.trialsPerSecond / one.trialsPerSecond)}x`, r.coresUsed, r.trialsPerSecond / r.coresUsed]),
      },
    ],
    targets: [
      {
        target: '>= 1.8x with 2 threads',
        measured: most.threads === 1 ? 'only one core available' : `${fmt(speedup)}x with ${most.threads} threads`,
        holds: most.threads === 1 ? null : speedup >= 1.8,
      },
    ],
    notes: [
      'Start-up (thread creation, engine set-up, data copy, one one-epoch trial per thread) is excluded from "trials (s)" and shown apart.',
      'On a machine shared with other jobs, the speed-up is bounded by the cores actually free: "cores used" is the CPU time the process got per second of wall time.',
      'With one worker the process already uses more than one core: V8\'s background threads (JIT and wasm tier-up compilation, concurrent GC) run beside the worker. On 2 cores the one-worker baseline thus borrows part of the second core; compare trials per CPU-second for the scaling of the pool itself. (Measured once by hand: with `node --single-threaded` one worker uses 1.02 cores and 2 threads reach 1.66x.)',
    ],
    data: runs,
  };
}
