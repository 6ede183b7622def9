/**
 * Training throughput of four paths on the same networks and data: tfjs layers `fit()` on the
 * cpu backend, `fit()` on wasm, rungwise's `trainSegment` on tfjs-wasm, and rungwise's engine.
 * Each measurement runs in a fresh worker thread because a tfjs backend is per-thread global state.
 */
import { Worker } from 'node:worker_threads';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult, type TargetCheck } from './report.js';
import { parameterCount } from './synthetic.js';
import type { ThroughputJob, ThroughputSample, TrainingPath } from './throughput-worker.js';

const NETWORKS = [
  { depth: 1, width: 16 },
  { depth: 2, width: 64 },
  { depth: 3, width: 128 },
  { depth: 4, width: 256 },
] as const;
const BATCH_SIZES = [32, 256] as const;
const PATHS: TrainingPath[] = ['fit-cpu', 'fit-wasm', 'rungwise-wasm', 'rungwise-engine'];
/** The engine's speed-up over `trainSegment` on tfjs-wasm that each network and batch size should reach. */
const ENGINE_TARGETS = [
  { network: '1x16', batchSize: 32, speedup: 5 },
  { network: '2x64', batchSize: 32, speedup: 5 },
  { network: '3x128', batchSize: 32, speedup: 4 },
  { network: '3x128', batchSize: 256, speedup: 2 },
  { network: '4x256', batchSize: 256, speedup: 1.5 },
] as const;
const INPUTS = 20;
const CLASSES = 3;
const REPEATS = 2;

function measure(job: ThroughputJob): Promise<ThroughputSample> {
  return new Promise((resolve, reject) => {
    const worker = new Worker(new URL('./throughput-worker.js', import.meta.url), { workerData: job });
    worker.once('message', (sample: ThroughputSample) => {
      resolve(sample);
      void worker.terminate();
    });
    worker.once('error', reject);
    worker.once('exit', (code) => {
      if (code !== 0) reject(new Error(`throughput worker for ${job.path} ${job.depth}x${job.width} exited with code ${code}`));
    });
  });
}

interface Row {
  network: string;
  batchSize: number;
  parameters: number;
  samplesPerSecond: Record<TrainingPath, number>;
  gflops: Record<TrainingPath, number>;
  epochs: Record<TrainingPath, number>;
}

export async function throughputGroup(options: BenchOptions): Promise<GroupResult> {
  const trainRows = options.quick ? 1024 : 4096;
  const rows: Row[] = [];
  for (const { depth, width } of NETWORKS) {
    for (const batchSize of BATCH_SIZES) {
      const parameters = parameterCount(INPUTS, depth, width, CLASSES);
      const row: Row = { network: `${depth}x${width}`, batchSize, parameters, samplesPerSecond: {} as Row['samplesPerSecond'], gflops: {} as Row['gflops'], epochs: {} as Row['epochs'] };
      // Best of REPEATS, the paths interleaved, so a burst of load from other jobs hits one sample, not one path.
      for (let repeat = 0; repeat < REPEATS; repeat++) for (const path of PATHS) {
        const sample = await measure({
          path,
          depth,
          width,
          batchSize,
          trainRows,
          validationRows: 256,
          targetSeconds: options.quick ? 0.5 : 1.5,
          maxEpochs: options.quick ? 3 : 8,
        });
        const perSecond = (trainRows * sample.epochs) / sample.seconds;
        if (perSecond <= (row.samplesPerSecond[path] ?? 0)) continue;
        row.samplesPerSecond[path] = perSecond;
        // Common practice (no source): training costs about 6 FLOPs per parameter per sample (2 forward, 4 backward).
        row.gflops[path] = (6 * parameters * perSecond) / 1e9;
        row.epochs[path] = sample.epochs;
      }
      rows.push(row);
      console.log(`   ${row.network} batch ${batchSize}: ${PATHS.map((p) => `${p} ${fmt(row.samplesPerSecond[p])}/s`).join(', ')}`);
    }
  }
  const ratio = (row: Row, over: TrainingPath, path: TrainingPath = 'rungwise-wasm'): number => row.samplesPerSecond[path] / row.samplesPerSecond[over];
  const engineRatio = (row: Row): number => ratio(row, 'rungwise-wasm', 'rungwise-engine');
  const key = rows.find((r) => r.network === '3x128' && r.batchSize === 32)!;
  const slowest = rows.reduce((worst, row) => (ratio(row, 'fit-wasm') < ratio(worst, 'fit-wasm') ? row : worst));
  const targets: TargetCheck[] = [
    { target: '(c) rungwise >= 4x (a) fit-cpu on 3x128, batch 32', measured: `${fmt(ratio(key, 'fit-cpu'))}x`, holds: ratio(key, 'fit-cpu') >= 4 },
    {
      target: '(c) no slower than (b) fit-wasm anywhere',
      measured: `lowest (c)/(b) ${fmt(ratio(slowest, 'fit-wasm'))}x at ${slowest.network} batch ${slowest.batchSize}`,
      holds: ratio(slowest, 'fit-wasm') >= 1,
    },
    ...ENGINE_TARGETS.map(({ network, batchSize, speedup }) => {
      const row = rows.find((r) => r.network === network && r.batchSize === batchSize)!;
      return { target: `(d) engine >= ${speedup}x (c) trainSegment on ${network}, batch ${batchSize}`, measured: `${fmt(engineRatio(row))}x`, holds: engineRatio(row) >= speedup };
    }),
  ];
  return {
    group: 'throughput',
    title: '1. Training throughput (20 inputs, 3 classes, Adam, relu)',
    tables: [
      {
        title: `Samples per second (GFLOP/s at 6 x parameters x samples), ${trainRows} training rows`,
        columns: ['network', 'params', 'batch', '(a) fit cpu', '(b) fit wasm', '(c) trainSegment wasm', '(d) engine', '(c)/(a)', '(c)/(b)', '(d)/(c)', '(d)/(b)'],
        rows: rows.map((r) => [
          r.network,
          r.parameters,
          r.batchSize,
          ...PATHS.map((p) => `${fmt(r.samplesPerSecond[p])} (${fmt(r.gflops[p], 2)})`),
          `${fmt(ratio(r, 'fit-cpu'))}x`,
          `${fmt(ratio(r, 'fit-wasm'))}x`,
          `${fmt(engineRatio(r))}x`,
          `${fmt(ratio(r, 'fit-wasm', 'rungwise-engine'))}x`,
        ]),
      },
    ],
    targets,
    notes: [
      'Each figure: the best of 2 runs, the four paths interleaved, each run in a fresh worker thread: a warm-up epoch on 512 rows, one timed calibration epoch (the measurement itself when it lasts 0.75 s or more), else as many epochs as fill about 1.5 s (at most 8) timed end to end; (c) times whole `trainSegment` calls (network set-up included).',
      '(c) and (d) also run a validation pass (256 rows) and the task metrics after every epoch, which fit() does not; (a) and (b) use fit() with shuffle: true and no validation.',
      '(d) is the same request as (c) with the engine as trainer (one call into WebAssembly per step; the data set copied into engine memory once per thread).',
      'The machine is shared with other jobs, so single figures can be off by tens of percent; the ratios of neighbouring runs are steadier.',
    ],
    data: rows,
  };
}
