/**
 * Memory over many consecutive small trials in one worker thread (through `TrialPool`, so the
 * per-task message channel is exercised too): first, last and largest readings and the slope.
 */
import { fork } from 'node:child_process';
import { rm } from 'node:fs/promises';
import path from 'node:path';
import { TrialPool } from '../src/transports/threads/pool.js';
import { configurationForTrial } from '../src/space/sample.js';
import { studySchema } from '../src/study/definition.js';
import type { BenchOptions } from './index.js';
import type { MemoryReading, ProbedResult } from './fixtures/memory-probe-thread.js';
import { fmt, slope, type GroupResult } from './report.js';
import { tempDir } from './studies.js';
import { benchDataset, sharedDataset } from './synthetic.js';

const FIELDS: (keyof MemoryReading)[] = ['rss', 'heapUsed', 'engineBytes', 'wasmHeapBytes', 'tensorBytes', 'numTensors'];

/**
 * Runs the measurement in a fresh Node process (bench/memory-process), so the process-wide rss
 * is not inflated by what earlier groups allocated.
 */
export function memoryGroup(options: BenchOptions): Promise<GroupResult> {
  return new Promise((resolve, reject) => {
    const child = fork(new URL('./memory-process.js', import.meta.url), options.quick ? ['--quick'] : [], { stdio: 'inherit' });
    child.once('message', (result: GroupResult) => resolve(result));
    child.once('error', reject);
    child.once('exit', (code) => {
      if (code !== 0) reject(new Error(`the memory benchmark process exited with code ${code}`));
    });
  });
}

/** The measurement itself; call it in a process of its own. */
export async function measureMemory(options: BenchOptions): Promise<GroupResult> {
  const trials = options.quick ? 100 : 500;
  const dataset = sharedDataset(benchDataset(256, 64));
  // Varied small networks, optimizers, dropout and L2, as a study would draw them.
  const space = studySchema.parse({
    name: 'bench-memory',
    data: { csv: 'x.csv', target: 'y', task: 'multiclass' },
    space: {
      depth: { min: 1, max: 3 },
      width: { min: 4, max: 32, log: true },
      activation: ['relu', 'tanh', 'selu', 'swish'],
      learningRate: { min: 1e-3, max: 0.1 },
      batchSize: [16, 32, 64],
      optimizer: ['sgd', 'momentum', 'adam'],
      l2: { min: 1e-6, max: 1e-3 },
      dropout: { min: 0, max: 0.5 },
    },
    budget: { trials, maxEpochs: 2 },
  }).space;
  const dir = await tempDir('memory');
  const pool = new TrialPool({ threads: 1, threadFile: new URL('./fixtures/memory-probe-thread.js', import.meta.url).pathname });
  const readings: MemoryReading[] = [];
  let leakedTrials = 0;
  try {
    for (let id = 1; id <= trials; id++) {
      // Every trial returns a checkpoint, as in a halving study.
      const request = { trialId: id, seed: id, configuration: configurationForTrial(space, 3, id), dataset, datasetId: dataset.id, fromEpoch: 0, toEpoch: 2 };
      const result = (await pool.run(request, () => undefined)) as ProbedResult;
      if (result.tensorsAfter !== result.tensorsBefore) leakedTrials += 1;
      readings.push(result.memory);
    }
  } finally {
    await pool.close();
    await rm(dir, { recursive: true, force: true });
  }
  const half = Math.floor(trials / 2);
  // The engine's memory only grows when a trial needs more than any before; a leak would grow it on.
  const engineAtHalf = readings[half - 1]!.engineBytes;
  const index = readings.map((_, i) => i + 1);
  const rows = FIELDS.map((field) => {
    const values = readings.map((r) => r[field]);
    const perTrial = slope(index.slice(half), values.slice(half));
    const scale = field === 'numTensors' ? 1 : 2 ** 20;
    const unit = field === 'numTensors' ? '' : ' MiB';
    const show = (v: number): string => `${fmt(v / scale)}${unit}`;
    return [field, show(values[0]!), show(values.at(-1)!), show(Math.max(...values)), field === 'numTensors' ? fmt(perTrial, 2) : `${fmt((perTrial / 1024) * 100, 3)} KiB`];
  });
  const tensorsFlat = readings.at(-1)!.numTensors === readings[0]!.numTensors && leakedTrials === 0;
  const rssSlope = slope(index.slice(half), readings.slice(half).map((r) => r.rss));
  const heapSlope = slope(index.slice(half), readings.slice(half).map((r) => r.heapUsed));
  return {
    group: 'memory',
    title: `5. Memory over ${trials} consecutive small trials in one worker`,
    tables: [{ title: 'Readings after each trial', columns: ['reading', 'first', 'last', 'max', 'slope over 2nd half, per 100 trials'], rows }],
    targets: [
      { target: 'tensor count flat', measured: `${readings[0]!.numTensors} -> ${readings.at(-1)!.numTensors}; trials with tensorsAfter != tensorsBefore: ${leakedTrials}`, holds: tensorsFlat },
      {
        target: 'resident memory flat',
        measured: `rss slope ${fmt((rssSlope / 1024) * 100)} KiB per 100 trials (2nd half), heapUsed ${fmt((heapSlope / 1024) * 100)} KiB per 100 trials`,
        // Common practice (no source): under 1 MiB per 100 trials over the second half counts as flat, given GC noise.
        holds: rssSlope * 100 < 2 ** 20,
      },
      {
        target: 'engine memory flat over the second half (it grows only to what the largest trial needs)',
        measured: `${fmt(engineAtHalf / 2 ** 20)} MiB at trial ${half}, ${fmt(readings.at(-1)!.engineBytes / 2 ** 20)} MiB at the end`,
        holds: readings.at(-1)!.engineBytes === engineAtHalf,
      },
    ],
    notes: [
      'Networks 1-3 x 4-32 units, sgd/momentum/adam, dropout and L2, 2 epochs on 256 rows; each trial writes a checkpoint (4 directories reused in turn).',
      'Each reading follows a full garbage collection in the worker. The study runs in a process of its own; rss is that whole process (main thread included), as worker threads share one process; heapUsed is the worker thread\'s V8 heap.',
    ],
    data: { trials, leakedTrials, readings },
  };
}
