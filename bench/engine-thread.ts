/**
 * The engine's own figures in a thread of their own: its matrix-product kernel beside tfjs-wasm's
 * matMul at the same sizes, a whole training step at 4x256 batch 256, the validation pass, and what
 * the regularisers (weight decay, clipping, label smoothing) add to a plain and a residual step.
 */
import { parentPort, workerData } from 'node:worker_threads';
import * as tf from '@tensorflow/tfjs';
import type { TrialConfiguration } from '../src/core/configuration.js';
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

/** One network's epochs with the regularisers off and with all three on, alternating: milliseconds of each pair. */
export interface RegulariserSample {
  network: string;
  rows: number;
  pairs: { offMs: number; onMs: number }[];
}

export interface EngineSample {
  kernels: KernelSample[];
  step: { network: string; batchSize: number; samplesPerSecond: number; gflops: number };
  validation: { rows: number; evaluateMs: number; metricsMs: number; epochMs: number };
  regularisers: RegulariserSample[];
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

/** The regularisers' settings of the comparison: all three on, at values a search draws. */
const ALL_REGULARISERS = { weightDecay: 1e-4, maxGradientNorm: 1, labelSmoothing: 0.1 } as const;

/**
 * Samples per second of a plain 4x256 and a residual 2-block 256-wide network (batch 256, Adam), with
 * the regularisers off and on in alternating epochs of 1024 rows of one trial (its regulariser words
 * rewritten before each epoch), so that each pair shares the machine's load of the moment.
 */
function regulariserCost(seconds: number): RegulariserSample[] {
  const rows = 1024;
  const dataset = benchDataset(rows, 256, 20, 3);
  const base: TrialConfiguration = { depth: 4, width: 256, activation: 'relu', learningRate: 1e-3, batchSize: 256, optimizer: 'adam', l2: 0, dropout: 0 };
  const networks: { network: string; configuration: TrialConfiguration }[] = [
    { network: 'plain 4x256', configuration: base },
    { network: 'residual 2 blocks x 256', configuration: { ...base, depth: 2, block: 'residual' } },
  ];
  return networks.map(({ network, configuration }) => {
    const on = { ...configuration, ...ALL_REGULARISERS };
    const trial = EngineTrial.create({ trialId: 1, seed: 7, configuration: on, dataset });
    const timed = (settings: TrialConfiguration, epoch: number): number => {
      trial.setRegularisers(settings);
      const started = performance.now();
      trial.trainEpoch(epoch);
      return performance.now() - started;
    };
    timed(configuration, 0);
    timed(on, 0);
    const pairs: RegulariserSample['pairs'] = [];
    let spent = 0;
    while (spent < seconds * 2000 || pairs.length < 5) {
      const pair = { offMs: timed(configuration, 2 * pairs.length + 1), onMs: timed(on, 2 * pairs.length + 2) };
      pairs.push(pair);
      spent += pair.offMs + pair.onMs;
    }
    return { network, rows, pairs };
  });
}

await initBackend();
const seconds = quick ? 0.3 : 1.5;
const sample: EngineSample = { kernels: kernels(seconds), ...wholeStep(seconds), regularisers: regulariserCost(seconds) };
parentPort!.postMessage(sample);
