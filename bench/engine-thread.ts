/**
 * The engine's own figures in a thread of their own: its matrix-product kernel beside tfjs-wasm's
 * matMul at the same sizes, a whole training step at 4x256 batch 256, and the validation pass.
 */
import { parentPort, workerData } from 'node:worker_threads';
import * as tf from '@tensorflow/tfjs';
import { EngineTrial } from '../src/trainers/engine/trial.js';
import { align16, engine, reserve } from '../src/trainers/engine/module.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { computeMetrics } from '../src/metrics/metrics.js';
import { stream } from '../src/random/streams.js';
import { benchDataset, parameterCount } from './synthetic.js';

export interface KernelSample {
  size: string;
  engineGflops: number;
  tfjsGflops: number;
}

export interface EngineSample {
  kernels: KernelSample[];
  step: { network: string; batchSize: number; samplesPerSecond: number; gflops: number };
  validation: { rows: number; evaluateMs: number; metricsMs: number; epochMs: number };
}

const { quick } = workerData as { quick: boolean };
const SIZES = [
  [32, 128, 128],
  [256, 256, 256],
] as const;

/** Repeats `run` until about `seconds` have passed (after one untimed call); returns calls per second. */
function rate(run: () => void, seconds: number): number {
  run();
  let calls = 0;
  const started = performance.now();
  while (performance.now() - started < seconds * 1000) {
    run();
    calls++;
  }
  return calls / ((performance.now() - started) / 1000);
}

function randomFloats(count: number, seed: string): Float32Array {
  const rng = stream('bench', 'kernel', seed);
  return Float32Array.from({ length: count }, () => rng() - 0.5);
}

function kernels(seconds: number): KernelSample[] {
  const wasm = engine();
  return SIZES.map(([m, k, n]) => {
    const a = align16(wasm.heapBase());
    const b = align16(a + m * k * 4);
    const c = align16(b + k * n * 4);
    reserve(c + m * n * 4);
    const aValues = randomFloats(m * k, 'a');
    const bValues = randomFloats(k * n, 'b');
    new Float32Array(wasm.memory.buffer, a, m * k).set(aValues);
    new Float32Array(wasm.memory.buffer, b, k * n).set(bValues);
    const flop = 2 * m * k * n;
    const engineGflops = (rate(() => wasm.gemm(a, k, b, n, 0, c, n, m, k, n), seconds) * flop) / 1e9;
    const ta = tf.tensor2d(aValues, [m, k]);
    const tb = tf.tensor2d(bValues, [k, n]);
    // The wasm backend runs each kernel when called; dataSync would add a copy, so results are only disposed.
    const tfjsGflops = (rate(() => tf.matMul(ta, tb).dispose(), seconds) * flop) / 1e9;
    tf.dispose([ta, tb]);
    return { size: `${m}x${k}x${n}`, engineGflops, tfjsGflops };
  });
}

function wholeStep(seconds: number): Pick<EngineSample, 'step' | 'validation'> {
  const rows = quick ? 1024 : 4096;
  const dataset = benchDataset(rows, 256, 20, 3);
  const params = { depth: 4, width: 256, activation: 'relu', learningRate: 1e-3, batchSize: 256, optimizer: 'adam', l2: 0, dropout: 0 } as const;
  const trial = EngineTrial.create({ trialId: 1, seed: 7, configuration: params, dataset });
  let epoch = 0;
  const epochsPerSecond = rate(() => trial.trainEpoch(++epoch), seconds);
  const samplesPerSecond = epochsPerSecond * rows;
  // Common practice (no source): training costs about 6 FLOPs per parameter per sample (2 forward, 4 backward).
  const gflops = (6 * parameterCount(20, 4, 256, 3) * samplesPerSecond) / 1e9;
  let outputs: Float32Array = new Float32Array(0);
  const evaluateMs = 1000 / rate(() => (outputs = trial.evaluate().outputs), seconds / 2);
  const metricsMs = 1000 / rate(() => computeMetrics('multiclass', dataset.validation.y, outputs, 3), seconds / 2);
  return {
    step: { network: '4x256', batchSize: 256, samplesPerSecond, gflops },
    validation: { rows: dataset.validation.rows, evaluateMs, metricsMs, epochMs: 1000 / epochsPerSecond },
  };
}

await initBackend();
const seconds = quick ? 0.3 : 1.5;
const sample: EngineSample = { kernels: kernels(seconds), ...wholeStep(seconds) };
parentPort!.postMessage(sample);
