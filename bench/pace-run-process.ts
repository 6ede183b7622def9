/**
 * Child-process entry of the pace benchmark's end-to-end figure: the whole `runStudy` (data load,
 * thread thread start, training, validation and metrics every epoch, checkpoints, study-file saves)
 * with `--threads N` (default 1) on a study fixed to 3x128, batch 32, Adam, relu, on a seeded CSV of 20 numeric
 * inputs and 3 classes whose training split has 4,096 rows. Posts a `RunMeasurement`.
 */
import { writeFile } from 'node:fs/promises';
import path from 'node:path';
import { runStudy } from '../src/runner/run-study.js';
import { stream } from '../src/random/streams.js';
import { tempDir, writeDefinition } from './studies.js';

export interface RunMeasurement {
  trials: number;
  epochs: number;
  trainRows: number;
  wallSeconds: number;
  /** Wall time from the first job's start to the study's end (data load and the first thread's start-up excluded). */
  trainingWallSeconds: number;
  /** Seconds the worker spent in its jobs (sum of `workerSeconds`). */
  workerSeconds: number;
  /** Sum of the epochs' own seconds (training epoch, validation pass, metrics) as the thread timed them. */
  epochSeconds: number;
  samplesPerSecond: number;
  /** Samples per second of the process's CPU time over the whole run (every thread, data load included). */
  samplesPerCpuSecond: number;
  threads: number;
  /** Share of the training stretch the coordinating (main) thread was busy: dispatch, saves, checkpoint writes. */
  mainThreadBusy: number;
  /** CPU time of the whole process (every thread) over the training stretch's wall time: the cores actually obtained. */
  coresUsed: number;
}

/** Rows such that the training split (1 - 0.2 - 0.15 of them) holds 4,096. */
const CSV_ROWS = Math.round(4096 / 0.65);
const INPUTS = 20;

async function writeCsv(file: string): Promise<void> {
  const rng = stream('bench', 'pace-run');
  const weights = Array.from({ length: 3 * INPUTS }, () => rng() - 0.5);
  const lines = [[...Array.from({ length: INPUTS }, (_, i) => `x${i + 1}`), 'label'].join(',')];
  for (let r = 0; r < CSV_ROWS; r++) {
    const x = Array.from({ length: INPUTS }, () => rng() * 2 - 1);
    const scores = [0, 1, 2].map((c) => x.reduce((s, v, i) => s + v * weights[c * INPUTS + i]!, 0));
    lines.push([...x.map((v) => v.toFixed(4)), `c${scores.indexOf(Math.max(...scores))}`].join(','));
  }
  await writeFile(file, lines.join('\n') + '\n');
}

const argv = process.argv.slice(2);
const quick = argv.includes('--quick');
const option = (name: string, otherwise: number): number => (argv.includes(name) ? Number(argv[argv.indexOf(name) + 1]) : otherwise);
const threads = option('--threads', 1);
const dir = await tempDir('pace-run');
const csv = path.join(dir, 'pace.csv');
await writeCsv(csv);
const trials = option('--trials', quick ? 2 : 4);
const maxEpochs = quick ? 5 : 15;
const definition = await writeDefinition(dir, {
  name: 'bench-pace',
  data: { csv: 'pace.csv', target: 'label', task: 'multiclass' },
  space: { depth: { min: 3, max: 3 }, width: { min: 128, max: 128 }, activation: ['relu'], learningRate: { min: 0.001, max: 0.001 }, batchSize: [32], optimizer: ['adam'] },
  budget: { trials, maxEpochs },
  sampler: { kind: 'random', seed: 1 },
  threads,
});
let firstJob = 0;
const cpuAtStart = process.cpuUsage();
let busyFrom: ReturnType<typeof performance.eventLoopUtilization> | undefined;
let cpuFrom: NodeJS.CpuUsage | undefined;
const started = performance.now();
const outcome = await runStudy(definition, {
  out: path.join(dir, 'run'),
  threads,
  onEvent: (event) => {
    if (event.type === 'job-started' && firstJob === 0) {
      firstJob = performance.now();
      busyFrom = performance.eventLoopUtilization();
      cpuFrom = process.cpuUsage();
    }
  },
});
const ended = performance.now();
const busy = performance.eventLoopUtilization(busyFrom);
const cpu = process.cpuUsage(cpuFrom);
const cpuWhole = process.cpuUsage(cpuAtStart);
const { doc } = outcome;
const epochs = doc.trials.reduce((sum, t) => sum + t.curve.length, 0);
const trainRows = doc.data.trainRows;
const result: RunMeasurement = {
  trials: doc.trials.length,
  epochs,
  trainRows,
  wallSeconds: (ended - started) / 1000,
  trainingWallSeconds: (ended - firstJob) / 1000,
  workerSeconds: doc.trials.reduce((sum, t) => sum + (t.workerSeconds ?? 0), 0),
  epochSeconds: doc.trials.reduce((sum, t) => sum + t.curve.reduce((s, p) => s + p.seconds, 0), 0),
  samplesPerSecond: (trainRows * epochs) / ((ended - started) / 1000),
  samplesPerCpuSecond: (trainRows * epochs) / ((cpuWhole.user + cpuWhole.system) / 1e6),
  threads,
  mainThreadBusy: busy.utilization,
  coresUsed: (cpu.user + cpu.system) / 1e6 / ((ended - firstJob) / 1000),
};
if (process.send) process.send(result, () => process.exit(0));
else console.log(JSON.stringify(result, null, 1));
