/**
 * A study served over Redis (a private redis-server on loopback): (1) the round trip of one job
 * from the coordinator through a worker process that trains nothing and back; (2) the
 * coordinator's capacity with 64 simulated workers that train nothing, a whole study handled and
 * saved; (3) real training, the coordinator with 2 worker processes against 2 local threads on the
 * same study. Worker processes start and attach before timing starts.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { runStudy } from '../src/runner/run-study.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { StudyStore } from '../src/store/study-store.js';
import { RedisTransport } from '../src/transports/redis/coordinator.js';
import { queuedStudy } from '../src/transports/redis/study.js';
import type { SharedDataset } from '../src/core/job.js';
import { startPrivateRedis } from '../scripts/redis-server.js';
import type { BenchOptions } from './index.js';
import { fmt, median, quantile, type GroupResult } from './report.js';
import { tempDir, writeDefinition, writeTinyCsv } from './studies.js';

const BIN = path.resolve('bin/rungwise.js'); // npm runs scripts from the package root
const SIMULATED = new URL('./fixtures/simulated-workers.js', import.meta.url).pathname;

/** Start a node process and resolve once it prints a line matching `ready`. */
function startProcess(args: string[], ready: RegExp, children: ChildProcess[]): Promise<void> {
  const child = spawn(process.execPath, args, { stdio: ['ignore', 'pipe', 'pipe'] });
  children.push(child);
  return new Promise((resolve, reject) => {
    let text = '';
    const onData = (chunk: Buffer): void => {
      text += chunk.toString();
      if (ready.test(text)) resolve();
    };
    child.stdout!.on('data', onData);
    child.stderr!.on('data', onData);
    child.once('exit', (code) => reject(new Error(`${args.join(' ')} ended (code ${code}):\n${text}`)));
  });
}

async function stopProcesses(children: ChildProcess[]): Promise<void> {
  await Promise.all(
    children.splice(0).map(
      (child) =>
        new Promise<void>((resolve) => {
          if (child.exitCode !== null || child.signalCode !== null) return resolve();
          child.once('exit', () => resolve());
          child.kill('SIGTERM');
        }),
    ),
  );
}

/** Simulated worker counts of the scale table. */
const SCALE_WORKERS = [1, 16, 64, 256];

/** The first worker count whose jobs/s is less than 10% above the previous count's (undefined: it kept growing). */
function saturatesAt(points: [number, number][]): number | undefined {
  for (let i = 1; i < points.length; i++) if (points[i]![1] < points[i - 1]![1] * 1.1) return points[i]![0];
  return undefined;
}

const emptyDataset: SharedDataset = { id: 'bench-empty', task: 'binary', inputCount: 1, outputCount: 1, train: { rows: 1, x: new Float32Array(1), y: new Float32Array(1) }, validation: { rows: 1, x: new Float32Array(1), y: new Float32Array(1) } };

/** Sequential jobs through Redis to one worker process that trains nothing: milliseconds per round trip. */
async function roundTrips(url: string, jobs: number, children: ChildProcess[]): Promise<number[]> {
  await startProcess([SIMULATED, url, '1'], /ready/, children);
  const transport = new RedisTransport({ url, queue: 'bench-round-trip', fresh: true });
  try {
    await transport.addDataset(emptyDataset);
    const params = { depth: 1, width: 4, activation: 'relu' as const, learningRate: 0.01, batchSize: 32, optimizer: 'adam' as const, l2: 0, dropout: 0 };
    const signal = new AbortController().signal;
    const times: number[] = [];
    for (let i = 0; i < jobs + 20; i++) {
      const started = performance.now();
      await transport.run({ trialId: i, seed: i, configuration: params, datasetId: emptyDataset.id, fromEpoch: 0, toEpoch: 1 }, () => undefined, signal);
      if (i >= 20) times.push(performance.now() - started); // the first 20 warm up connections and scripts
    }
    return times;
  } finally {
    await transport.close();
    await stopProcesses(children);
  }
}

/** Simulated workers split over at most two processes (one for a single worker). */
function workerProcesses(workers: number): number[] {
  return workers === 1 ? [1] : [Math.ceil(workers / 2), Math.floor(workers / 2)];
}

/** A random-search study of `trials` one-epoch trials, served to `workers` simulated workers (closed-form trainer) in one or two processes. */
async function capacity(url: string, trials: number, workers: number, children: ChildProcess[]): Promise<{ perSecond: number; saved: number; seconds: number; cpuMsPerJob: number }> {
  await Promise.all(workerProcesses(workers).map((count) => startProcess([SIMULATED, url, String(count)], /ready/, children)));
  const dir = await tempDir('queue-capacity');
  try {
    const csv = await writeTinyCsv(dir);
    const file = await writeDefinition(dir, {
      name: 'bench-capacity',
      data: { csv: path.basename(csv), target: 'label', task: 'binary' },
      space: { depth: { min: 1, max: 2 }, width: { min: 4, max: 8 }, activation: ['relu'], learningRate: { min: 0.001, max: 0.1 } },
      budget: { trials, maxEpochs: 1 },
      sampler: { kind: 'random', seed: 1 },
    });
    const out = path.join(dir, 'run');
    let first: number | undefined;
    const cpu = process.cpuUsage(); // this process holds the coordinator only (workers and Redis run apart)
    const outcome = await runStudy(file, {
      out,
      transport: queuedStudy({ url, studyName: 'bench-capacity', runDir: out, fresh: true }).transport,
      onEvent: (event) => {
        if (event.type === 'trial-finished') first ??= performance.now();
      },
    });
    const seconds = (performance.now() - first!) / 1000;
    const used = process.cpuUsage(cpu);
    const saved = (await StudyStore.open(out)).doc.trials.filter((t) => t.status === 'trained').length;
    if (outcome.doc.state !== 'finished') throw new Error('capacity study did not finish');
    return { perSecond: (saved - 1) / seconds, saved, seconds, cpuMsPerJob: (used.user + used.system) / 1000 / saved };
  } finally {
    await stopProcesses(children);
  }
}

interface TrainingTimes {
  /** Study start to end, thread (and, for the queue, worker process) start-up included. */
  wholeSeconds: number;
  /** First trial saved to last: the steady state, start-up excluded. */
  steadySeconds: number;
}

/** Times a study run: the whole run and the span from the first trial saved to the last. */
async function timedStudy(run: (onEvent: (event: { type: string }) => void) => Promise<unknown>): Promise<TrainingTimes> {
  const started = performance.now();
  let first: number | undefined;
  let last = 0;
  await run((event) => {
    if (event.type !== 'trial-finished') return;
    first ??= performance.now();
    last = performance.now();
  });
  return { wholeSeconds: (performance.now() - started) / 1000, steadySeconds: (last - first!) / 1000 };
}

/** The demo data, random search: 2 local threads, then the coordinator with 2 worker processes of 1 thread started with it. */
async function realTraining(url: string, trials: number, epochs: number, children: ChildProcess[]): Promise<{ local: TrainingTimes; queue: TrainingTimes }> {
  const demo = path.resolve('studies/demo/study.json');
  const base = JSON.parse(await readFile(demo, 'utf8')) as StudyDefinitionInput;
  const dir = await tempDir('queue-training');
  const file = await writeDefinition(dir, { ...base, name: 'bench-queue-training', data: { ...base.data, csv: path.resolve(path.dirname(demo), base.data.csv) }, budget: { trials, maxEpochs: epochs }, threads: 2 });
  const local = await timedStudy((onEvent) => runStudy(file, { out: path.join(dir, 'local'), threads: 2, onEvent }));
  try {
    const out = path.join(dir, 'queue');
    const queue = await timedStudy(async (onEvent) => {
      const workers = Promise.all([1, 2].map(() => startProcess([BIN, 'worker', url, '--threads', '1'], /taking jobs of study queue/, children)));
      await Promise.all([workers, runStudy(file, { out, onEvent, transport: queuedStudy({ url, studyName: 'bench-queue-training', runDir: out, fresh: true }).transport })]);
    });
    return { local, queue };
  } finally {
    await stopProcesses(children);
  }
}

export async function queueGroup(options: BenchOptions): Promise<GroupResult> {
  const redis = await startPrivateRedis();
  const children: ChildProcess[] = [];
  try {
    const trips = await roundTrips(redis.url, options.quick ? 100 : 500, children);
    const cap = await capacity(redis.url, options.quick ? 1000 : 5000, 64, children);
    const scale: [number, Awaited<ReturnType<typeof capacity>>][] = [];
    for (const workers of SCALE_WORKERS) scale.push([workers, await capacity(redis.url, Math.max(options.quick ? 300 : 2000, 2 * workers), workers, children)]);
    const saturation = saturatesAt(scale.map(([workers, c]) => [workers, c.perSecond]));
    const training = await realTraining(redis.url, options.quick ? 4 : 16, options.quick ? 2 : 12, children);
    const tripMedian = median(trips);
    const tripP95 = quantile(trips, 0.95);
    const ratio = training.queue.wholeSeconds / training.local.wholeSeconds;
    const steadyRatio = training.queue.steadySeconds / training.local.steadySeconds;
    return {
      group: 'queue',
      title: 'Many machines: a study served over Redis (loopback)',
      tables: [
        { title: 'Job round trip through Redis (worker process that trains nothing)', columns: ['jobs', 'median ms', 'p95 ms', 'max ms'], rows: [[trips.length, tripMedian, tripP95, Math.max(...trips)]] },
        { title: 'Coordinator capacity, 64 simulated workers that train nothing', columns: ['trials saved', 'seconds', 'completions/s', 'coordinator CPU ms/job', 'jobs/s per coordinator core'], rows: [[cap.saved, cap.seconds, cap.perSecond, cap.cpuMsPerJob, 1000 / cap.cpuMsPerJob]] },
        {
          title: 'Coordinator cost per job by simulated workers on one Redis (closed-form trainer, one-epoch jobs)',
          columns: ['workers', 'trials saved', 'jobs/s', 'coordinator CPU ms/job', 'jobs/s per coordinator core'],
          rows: scale.map(([workers, c]) => [workers, c.saved, c.perSecond, c.cpuMsPerJob, 1000 / c.cpuMsPerJob]),
        },
        {
          title: 'Real training (demo data): 2 local threads vs coordinator + 2 worker processes',
          columns: ['span', '2 local threads s', 'queue + 2 workers s', 'ratio'],
          rows: [
            ['whole run (start-up included)', training.local.wholeSeconds, training.queue.wholeSeconds, ratio],
            ['first trial saved to last', training.local.steadySeconds, training.queue.steadySeconds, steadyRatio],
          ],
        },
      ],
      targets: [
        { target: 'round trip median < 5 ms', measured: `${fmt(tripMedian)} ms (p95 ${fmt(tripP95)} ms)`, holds: tripMedian < 5 },
        { target: '>= 1,000 completions/s handled and saved with 64 workers', measured: `${fmt(cap.perSecond)}/s`, holds: cap.perSecond >= 1000 },
        { target: 'queue overhead < 10%, steady state (first trial saved to last, ratio < 1.1)', measured: `${fmt(steadyRatio)}x`, holds: steadyRatio < 1.1 },
        { target: 'queue overhead < 10%, whole run with worker processes starting (ratio < 1.1)', measured: `${fmt(ratio)}x`, holds: ratio < 1.1 },
      ],
      notes: [
        'Everything on one machine: Redis, the coordinator and every worker share its cores, so the figures are an upper bound on the coordinator\'s own cost.',
        'Capacity is timed from the first trial saved to the end of the study (the file saved); the worker processes are attached before the study starts.',
        `Scale: jobs/s ${saturation === undefined ? 'still grows at 256 workers' : `stops growing (less than 10% more than the count before) at ${saturation} workers`}; every simulated worker is a QueueWorker with its own connections, so Redis and the coordinator see 1 to 256 real clients.`,
        'Real training: the worker processes start together with the coordinator, inside the timed run (process, tfjs and thread start-up included), as the local run starts its threads.',
      ],
      data: { trips, capacity: cap, scale, training },
    };
  } finally {
    await stopProcesses(children);
    await redis.dispose();
  }
}
