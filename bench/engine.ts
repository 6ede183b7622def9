/**
 * The engine's kernel and step figures (bench/engine-thread.ts runs them in a fresh thread):
 * matrix-product GFLOP/s beside tfjs-wasm's matMul, the whole step as a share of the kernel rate,
 * and what the validation pass costs per epoch.
 */
import { Worker } from 'node:worker_threads';
import type { EngineSample } from './engine-thread.js';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult } from './report.js';

function measure(quick: boolean): Promise<EngineSample> {
  return new Promise((resolve, reject) => {
    const worker = new Worker(new URL('./engine-thread.js', import.meta.url), { workerData: { quick } });
    worker.once('message', (sample: EngineSample) => {
      resolve(sample);
      void worker.terminate();
    });
    worker.once('error', reject);
    worker.once('exit', (code) => {
      if (code !== 0) reject(new Error(`the engine benchmark thread exited with code ${code}`));
    });
  });
}

const KERNEL_TARGET_GFLOPS = 25;
const STEP_SHARE_TARGET = 0.6;

export async function engineGroup(options: BenchOptions): Promise<GroupResult> {
  // Best of two runs in fresh threads: a burst of load from other jobs hits one of them.
  const runs = [await measure(options.quick), await measure(options.quick)];
  const best = (pick: (s: EngineSample) => number): number => Math.max(...runs.map(pick));
  const kernels = runs[0]!.kernels.map((k, i) => ({
    size: k.size,
    engineGflops: best((s) => s.kernels[i]!.engineGflops),
    tfjsGflops: best((s) => s.kernels[i]!.tfjsGflops),
  }));
  const big = kernels.find((k) => k.size === '256x256x256')!;
  const stepGflops = best((s) => s.step.gflops);
  const share = stepGflops / big.engineGflops;
  const validation = runs[0]!.validation;
  return {
    group: 'engine',
    title: '1b. Training engine: kernel and step (one thread)',
    tables: [
      {
        title: 'Matrix product C = A . B, GFLOP/s (2mkn FLOP per product)',
        columns: ['m x k x n', 'engine (WebAssembly SIMD, 4x8 blocks)', 'tfjs-wasm matMul', 'engine / tfjs'],
        rows: kernels.map((k) => [k.size, fmt(k.engineGflops), fmt(k.tfjsGflops), `${fmt(k.engineGflops / k.tfjsGflops)}x`]),
      },
      {
        title: 'Whole training step, 4x256, batch 256, Adam (gather, forward, loss, backward, update)',
        columns: ['samples/s', 'GFLOP/s (6 x parameters x samples)', 'share of the 256x256x256 kernel rate'],
        rows: [[fmt(best((s) => s.step.samplesPerSecond)), fmt(stepGflops), `${fmt(share * 100)}%`]],
      },
      {
        title: `Validation per epoch (4x256, ${validation.rows} rows)`,
        columns: ['engine forward pass + loss (ms)', 'metrics in JavaScript (ms)', 'training epoch (ms)'],
        rows: [[fmt(validation.evaluateMs), fmt(validation.metricsMs), fmt(validation.epochMs)]],
      },
    ],
    targets: [
      ...kernels.map((k) => ({ target: `engine kernel >= ${KERNEL_TARGET_GFLOPS} GFLOP/s at ${k.size}`, measured: `${fmt(k.engineGflops)} GFLOP/s`, holds: k.engineGflops >= KERNEL_TARGET_GFLOPS })),
      { target: `whole step at 4x256 batch 256 >= ${STEP_SHARE_TARGET * 100}% of the kernel rate`, measured: `${fmt(share * 100)}% (${fmt(stepGflops)} of ${fmt(big.engineGflops)} GFLOP/s)`, holds: share >= STEP_SHARE_TARGET },
    ],
    notes: [
      'Best of 2 runs, each in a fresh thread; each figure repeats its call for about 1.5 s after one untimed call.',
      'tfjs-wasm matMul results are disposed without being read back (the wasm backend computes when called).',
      'The validation pass runs in the engine (forward in 256-row chunks); the metrics (accuracy, macro F1, log loss) in JavaScript over its outputs.',
    ],
    data: { runs },
  };
}
