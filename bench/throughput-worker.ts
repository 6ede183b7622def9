/**
 * One throughput measurement in its own thread (tfjs backends are per-thread global state):
 * `workerData` says which training path, network and batch size; the thread posts a ThroughputSample.
 */
import { parentPort, workerData } from 'node:worker_threads';
import * as tf from '@tensorflow/tfjs';
import '@tensorflow/tfjs-backend-wasm';
import { runTrainRequest } from '../src/trainers/run-request.js';
import type { TrainRequest } from '../src/trainers/contract.js';
import { benchDataset } from './synthetic.js';

export type TrainingPath = 'fit-cpu' | 'fit-wasm' | 'rungwise-wasm' | 'rungwise-engine';

export interface ThroughputJob {
  path: TrainingPath;
  depth: number;
  width: number;
  batchSize: number;
  trainRows: number;
  validationRows: number;
  /** Timed epochs are chosen so that they last about this long (at least one). */
  targetSeconds: number;
  maxEpochs: number;
}

export interface ThroughputSample {
  epochs: number;
  seconds: number;
  warmupSeconds: number;
  /** One epoch timed after the warm-up, to choose how many epochs to time. */
  calibrationSeconds: number;
}

const job = workerData as ThroughputJob;
const INPUTS = 20;
const CLASSES = 3;
const LEARNING_RATE = 1e-3;

const epochsFor = (epochSeconds: number): number =>
  Math.max(1, Math.min(job.maxEpochs, Math.round(job.targetSeconds / Math.max(epochSeconds, 1e-6))));

/** Rows of the warm-up epoch: enough to compile every kernel, few enough that the slow paths do not spend long on it. */
const WARMUP_ROWS = 512;

/**
 * Warm-up on a slice, one timed calibration epoch, then the timed epochs. When the calibration
 * epoch alone fills half the target time it is the measurement (the slowest paths run one epoch).
 */
async function protocol(warmup: () => Promise<number>, timeEpochs: (epochs: number) => Promise<number>): Promise<ThroughputSample> {
  const warmupSeconds = await warmup();
  const calibrationSeconds = await timeEpochs(1);
  if (calibrationSeconds >= job.targetSeconds / 2) return { epochs: 1, seconds: calibrationSeconds, warmupSeconds, calibrationSeconds };
  const epochs = epochsFor(calibrationSeconds);
  return { epochs, seconds: await timeEpochs(epochs), warmupSeconds, calibrationSeconds };
}

async function layersFit(backend: 'cpu' | 'wasm'): Promise<ThroughputSample> {
  await tf.setBackend(backend);
  await tf.ready();
  const dataset = benchDataset(job.trainRows, job.validationRows, INPUTS, CLASSES);
  const x = tf.tensor2d(dataset.train.x, [job.trainRows, INPUTS]);
  const y = tf.oneHot(tf.tensor1d(Int32Array.from(dataset.train.y), 'int32'), CLASSES).toFloat();
  const model = tf.sequential();
  for (let i = 0; i < job.depth; i++) {
    model.add(tf.layers.dense({ units: job.width, activation: 'relu', ...(i === 0 ? { inputShape: [INPUTS] } : {}) }));
  }
  model.add(tf.layers.dense({ units: CLASSES, activation: 'softmax' }));
  model.compile({ optimizer: tf.train.adam(LEARNING_RATE), loss: 'categoricalCrossentropy' });
  const fit = async (inputs: tf.Tensor, labels: tf.Tensor, epochs: number): Promise<number> => {
    const started = performance.now();
    await model.fit(inputs, labels, { batchSize: job.batchSize, epochs, shuffle: true, verbose: 0 });
    return (performance.now() - started) / 1000;
  };
  const rows = Math.min(WARMUP_ROWS, job.trainRows);
  return protocol(
    () => fit(x.slice(0, rows), y.slice(0, rows), 1),
    (epochs) => fit(x, y, epochs),
  );
}

/** rungwise's own loop: `trainSegment` on tfjs-wasm, or the engine. */
async function rungwise(trainer: 'tfjs' | 'engine'): Promise<ThroughputSample> {
  const dataset = benchDataset(job.trainRows, job.validationRows, INPUTS, CLASSES);
  const warmupData = benchDataset(Math.min(WARMUP_ROWS, job.trainRows), job.validationRows, INPUTS, CLASSES);
  const params = { depth: job.depth, width: job.width, activation: 'relu', learningRate: LEARNING_RATE, batchSize: job.batchSize, optimizer: 'adam', l2: 0, dropout: 0 } as const;
  let trialId = 0;
  const time = async (data: TrainRequest['dataset'], toEpoch: number): Promise<number> => {
    const request: TrainRequest = { trialId: ++trialId, seed: 7, dataset: data, datasetId: data.id, fromEpoch: 0, toEpoch, configuration: params, trainer };
    const started = performance.now();
    await runTrainRequest(request);
    return (performance.now() - started) / 1000;
  };
  return protocol(
    () => time(warmupData, 1),
    (epochs) => time(dataset, epochs),
  );
}

const run =
  job.path === 'rungwise-wasm' ? rungwise('tfjs') : job.path === 'rungwise-engine' ? rungwise('engine') : layersFit(job.path === 'fit-cpu' ? 'cpu' : 'wasm');
parentPort!.postMessage(await run);
