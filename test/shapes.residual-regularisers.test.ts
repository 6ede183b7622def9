/**
 * Residual blocks together with the searched regularisers (decoupled weight decay, gradient-norm
 * clipping, label smoothing): the engine's loss and every gradient against tfjs's own smoothed
 * losses differentiated by tf.variableGrads, single steps against the tfjs path's regularised step
 * and worked by hand from the published rules, whole trainings against the tfjs reference trainer,
 * and a checkpoint in the middle of a training.
 */
import path from 'node:path';
import * as tf from '@tensorflow/tfjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { SharedDataset } from '../src/core/job.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { stream } from '../src/random/streams.js';
import { networkWeights } from '../src/trainers/engine/checkpoint-state.js';
import { trainSegmentOnEngine } from '../src/trainers/engine/segment.js';
import type { EngineTrial } from '../src/trainers/engine/trial.js';
import { ADAM } from '../src/trainers/shared/optimizer-constants.js';
import { smoothedTargets } from '../src/trainers/shared/regularisers.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { createOptimizer, disposeOptimizer, trainSegment } from '../src/trainers/tfjs/loop.js';
import { disposeNetwork, forward, l2Penalty, lossFromLogits, type Network } from '../src/trainers/tfjs/network.js';
import { regularisedStep, smoothLabels } from '../src/trainers/tfjs/regularisers.js';
import { irisTasks } from './helpers/datasets.js';
import { labelTensor, relativeError, residualGradients, twinNetworks } from './helpers/engine.js';

let multiclass: SharedDataset;
let binary: SharedDataset;

beforeAll(async () => {
  initBackend();
  ({ multiclass, binary } = await irisTasks('residual-regularisers-iris'));
});
afterAll(() => tf.disposeVariables());

const datasetFor = (task: 'binary' | 'multiclass'): SharedDataset => (task === 'binary' ? binary : multiclass);

const base: TrialConfiguration = { depth: 2, width: 8, activation: 'tanh', learningRate: 0.05, batchSize: 16, optimizer: 'sgd', l2: 0, dropout: 0, block: 'residual' };

/** Twin residual networks (engine and tfjs) with random biases, gains away from 1 and norm biases away from 0; steps over every training row in file order. */
function twins(params: TrialConfiguration, dataset: SharedDataset, label: string): { trial: EngineTrial; network: Network } {
  const { trial, network } = twinNetworks(params, dataset, 17, stream('residual-regularisers', label));
  const rng = stream('residual-regularisers-gains', label);
  for (const layer of trial.layers.filter((l) => l.plan.norm)) {
    trial.writeMatrix(layer.at.normGain, layer.inStride, Float32Array.from({ length: layer.fanIn }, () => 0.5 + rng()), layer.fanIn);
    trial.writeMatrix(layer.at.normBias, layer.inStride, Float32Array.from({ length: layer.fanIn }, () => rng() - 0.5), layer.fanIn);
  }
  networkWeights(trial).forEach((weights, i) => {
    expect(weights.name).toBe(network.variables[i]!.name);
    network.variables[i]!.assign(tf.tensor(weights.values, weights.shape));
  });
  trial.setOrder(Int32Array.from({ length: dataset.train.rows }, (_, i) => i));
  return { trial, network };
}

// Source: tfjs 4.22 (tf.losses.*CrossEntropy with labelSmoothing, tf.variableGrads) as a reference library;
// Szegedy et al., "Rethinking the Inception Architecture for Computer Vision", CVPR 2016, section 7.
const GRADIENT_TOLERANCE = 1e-4;

describe('label smoothing through the residual output: loss and gradients against tfjs\'s smoothed losses', () => {
  for (const task of ['binary', 'multiclass'] as const) {
    it(`${task}, epsilon 0.2, with L2: the loss and every gradient (normalisation gains and biases included) within ${GRADIENT_TOLERANCE} relative error`, () => {
      const dataset = datasetFor(task);
      const rows = dataset.train.rows;
      const params: TrialConfiguration = { ...base, width: 7, batchSize: rows, l2: 0.01, labelSmoothing: 0.2 };
      const { trial, network } = twins(params, dataset, `gradients-${task}`);
      try {
        trial.setUpdating(false);
        const engineLoss = trial.step(0, rows);
        const actual = residualGradients(trial);
        const { value, grads } = tf.tidy(() => {
          const x = tf.tensor2d(dataset.train.x, [rows, dataset.inputCount]);
          const y = labelTensor(dataset, dataset.train.y);
          let loss = 0;
          const result = tf.variableGrads(() => {
            const logits = forward(network, x);
            const smoothed = task === 'binary' ? tf.losses.sigmoidCrossEntropy(y, logits, undefined, 0.2) : tf.losses.softmaxCrossEntropy(y, logits, undefined, 0.2);
            loss = smoothed.dataSync()[0]!;
            return tf.add(smoothed, l2Penalty(network, params.l2)) as tf.Scalar;
          }, network.variables);
          for (const g of Object.values(result.grads)) tf.keep(g);
          return { value: loss, grads: network.variables.map((v) => result.grads[v.name]!) };
        });
        expect(Math.abs(engineLoss - value)).toBeLessThan(1e-5 * Math.max(1, Math.abs(value)));
        expect(actual).toHaveLength(grads.length);
        grads.forEach((reference, i) => expect(relativeError(actual[i]!, reference.dataSync()), network.variables[i]!.name).toBeLessThan(GRADIENT_TOLERANCE));
        tf.dispose(grads);
      } finally {
        disposeNetwork(network);
      }
    });
  }
});

/** The tfjs path's step (src/trainers/tfjs/regularisers.ts) on the twin network over every training row. */
function tfjsStep(optimizer: tf.Optimizer, network: Network, params: TrialConfiguration, dataset: SharedDataset): void {
  const rows = dataset.train.rows;
  const targets = smoothedTargets(params, dataset.task, dataset.outputCount);
  tf.tidy(() => {
    const x = tf.tensor2d(dataset.train.x, [rows, dataset.inputCount]);
    const y = labelTensor(dataset, dataset.train.y);
    const objective = (): tf.Scalar => {
      const loss = lossFromLogits(dataset.task, forward(network, x), targets ? smoothLabels(y, targets) : y);
      return params.l2 > 0 ? (tf.add(loss, l2Penalty(network, params.l2)) as tf.Scalar) : loss;
    };
    regularisedStep(optimizer, objective, network, params);
  });
}

/** The norm of all gradients of the trial's network at its current weights (no update). */
function gradientNormOf(trial: EngineTrial, rows: number): number {
  trial.setUpdating(false);
  trial.step(0, rows);
  trial.setUpdating(true);
  return Math.sqrt(residualGradients(trial).reduce((sum, g) => sum + g.reduce((s, v) => s + v * v, 0), 0));
}

const stepCases: { name: string; task: 'binary' | 'multiclass'; settings: Partial<TrialConfiguration> }[] = [
  { name: 'SGDW', task: 'multiclass', settings: { optimizer: 'sgd', weightDecay: 0.05 } },
  { name: 'SGDW with momentum and L2', task: 'binary', settings: { optimizer: 'momentum', weightDecay: 0.05, l2: 0.01 } },
  { name: 'AdamW', task: 'multiclass', settings: { optimizer: 'adam', learningRate: 0.01, weightDecay: 0.05 } },
  { name: 'AdamW, clipping at a quarter of the first norm and label smoothing 0.1', task: 'multiclass', settings: { optimizer: 'adam', learningRate: 0.01, weightDecay: 0.05, labelSmoothing: 0.1 } },
  { name: 'sgd clipped at a quarter of the first norm, binary, label smoothing 0.2', task: 'binary', settings: { optimizer: 'sgd', labelSmoothing: 0.2 } },
];

describe('one and two regularised steps of a residual network against the tfjs path\'s step', () => {
  // Source: Loshchilov and Hutter, "Decoupled Weight Decay Regularization", ICLR 2019, Algorithms 1 (SGDW) and 2 (AdamW);
  // Pascanu, Mikolov, Bengio, "On the difficulty of training recurrent neural networks", ICML 2013, Algorithm 1;
  // tfjs 4.22 (tf.train.sgd, momentum, adam, tf.variableGrads) as the reference. Tolerance: Common practice (no source).
  for (const { name, task, settings } of stepCases) {
    it(`${name}: every weight, gain and bias within 1e-5 of the tfjs step's, relative to the largest`, () => {
      const dataset = datasetFor(task);
      const rows = dataset.train.rows;
      let params: TrialConfiguration = { ...base, batchSize: rows, ...settings };
      if (name.includes('clipped') || name.includes('clipping')) {
        const probe = twins(params, dataset, `step-${name}`);
        params = { ...params, maxGradientNorm: gradientNormOf(probe.trial, rows) / 4 };
        disposeNetwork(probe.network);
      }
      const { trial, network } = twins(params, dataset, `step-${name}`);
      const optimizer = createOptimizer(params.optimizer, params.learningRate);
      try {
        for (let step = 1; step <= 2; step++) {
          trial.step(0, rows);
          tfjsStep(optimizer, network, params, dataset);
          networkWeights(trial).forEach((w, i) => expect(relativeError(w.values, network.variables[i]!.dataSync()), `step ${step}, ${w.name}`).toBeLessThan(1e-5));
        }
      } finally {
        disposeOptimizer(optimizer);
        disposeNetwork(network);
      }
    });
  }
});

describe('what a residual step decays and clips, worked by hand', () => {
  /** Kernels decay; biases and the normalisations' gains and biases do not. */
  const decays = (name: string): boolean => name.endsWith('/kernel');
  const weightsOf = (trial: EngineTrial): Float64Array[] => networkWeights(trial).map((w) => Float64Array.from(w.values));

  /** The gradient at the trial's current weights (L2 term included), then one real step. */
  function gradientThenStep(trial: EngineTrial, rows: number): Float64Array[] {
    trial.setUpdating(false);
    trial.step(0, rows);
    const gradients = residualGradients(trial).map((g) => Float64Array.from(g));
    trial.setUpdating(true);
    trial.step(0, rows);
    return gradients;
  }

  it('AdamW: w <- w - lr m_hat / (sqrt(v_hat) + eps) - lambda w on the dense kernels only', () => {
    // Source: Loshchilov, Hutter, ICLR 2019, Algorithm 2 (AdamW), with Kingma and Ba's Adam, ICLR 2015, Algorithm 1.
    const { beta1, beta2, epsilon } = ADAM;
    const lambda = 0.05;
    const rows = multiclass.train.rows;
    const { trial, network } = twins({ ...base, optimizer: 'adam', learningRate: 0.01, batchSize: rows, weightDecay: lambda, labelSmoothing: 0.1 }, multiclass, 'adamw-by-hand');
    disposeNetwork(network);
    const names = networkWeights(trial).map((w) => w.name);
    expect(names.filter((n) => n.endsWith('/gain'))).toHaveLength(3);
    let w = weightsOf(trial);
    let m = w.map((p) => new Float64Array(p.length));
    let v = w.map((p) => new Float64Array(p.length));
    for (let t = 1; t <= 2; t++) {
      const g = gradientThenStep(trial, rows);
      m = m.map((mi, i) => mi.map((value, j) => beta1 * value + (1 - beta1) * g[i]![j]!));
      v = v.map((vi, i) => vi.map((value, j) => beta2 * value + (1 - beta2) * g[i]![j]! ** 2));
      w = w.map((wi, i) => wi.map((value, j) => value - (0.01 * (m[i]![j]! / (1 - beta1 ** t))) / (Math.sqrt(v[i]![j]! / (1 - beta2 ** t)) + epsilon) - (decays(names[i]!) ? lambda * value : 0)));
      networkWeights(trial).forEach((actual, i) => expect(relativeError(actual.values, w[i]!), `step ${t}, ${actual.name}`).toBeLessThan(1e-5));
    }
  });

  it('clipping scales every gradient, the normalisations\' included, by limit / (the norm of all of them)', () => {
    // Source: Pascanu, Mikolov, Bengio, ICML 2013, Algorithm 1 (g <- threshold / ||g|| g when ||g|| > threshold).
    const rows = binary.train.rows;
    const params: TrialConfiguration = { ...base, batchSize: rows, l2: 0.01 };
    const probe = twins(params, binary, 'clipping-by-hand');
    disposeNetwork(probe.network);
    const limit = gradientNormOf(probe.trial, rows) / 4;
    const { trial, network } = twins({ ...params, maxGradientNorm: limit }, binary, 'clipping-by-hand');
    disposeNetwork(network);
    let w = weightsOf(trial);
    for (let step = 0; step < 2; step++) {
      const g = gradientThenStep(trial, rows);
      const norm = Math.sqrt(g.reduce((sum, gi) => sum + gi.reduce((s, x) => s + x * x, 0), 0));
      const factor = norm > limit ? limit / norm : 1;
      if (step === 0) expect(factor).toBeCloseTo(0.25, 6);
      w = w.map((wi, i) => wi.map((value, j) => value - base.learningRate * factor * g[i]![j]!));
      networkWeights(trial).forEach((actual, i) => expect(relativeError(actual.values, w[i]!), `step ${step + 1}, ${actual.name}`).toBeLessThan(1e-6));
    }
  });
});

/**
 * Tolerance: Common practice (no source), as engine.regularisers.test.ts: the engine and tfjs sum in
 * different orders, so their float32 figures part in the last bits from the first step.
 */
const LOSS_TOLERANCE = 1e-4;
const EPOCHS = 10;

const trainingCases: { name: string; task: 'binary' | 'multiclass'; settings: Partial<TrialConfiguration>; maxEpochs?: number }[] = [
  { name: 'Adam, dropout, weight decay, clipping and label smoothing together', task: 'multiclass', settings: { optimizer: 'adam', learningRate: 0.01, weightDecay: 0.01, maxGradientNorm: 0.3, labelSmoothing: 0.1, dropout: 0.1, shape: 'funnel', width: 10 } },
  { name: 'momentum with weight decay, L2, clipping and smoothing under a warm-up then cosine schedule', task: 'binary', settings: { optimizer: 'momentum', learningRate: 0.02, weightDecay: 0.01, l2: 1e-3, maxGradientNorm: 0.2, labelSmoothing: 0.2, schedule: 'cosine', warmupEpochs: 2, minFactor: 0.1 }, maxEpochs: 14 },
];

describe('residual networks with the regularisers against the tfjs reference trainer on Iris', () => {
  for (const { name, task, settings, maxEpochs } of trainingCases) {
    it(`${task}, ${name}: losses within ${LOSS_TOLERANCE} of the tfjs path every epoch, and unlike the same trial without them`, async () => {
      const dataset = datasetFor(task);
      const configuration: TrialConfiguration = { ...base, ...settings };
      const request = { trialId: 2, seed: 11, configuration, dataset, datasetId: dataset.id, fromEpoch: 0, toEpoch: EPOCHS, ...(maxEpochs ? { maxEpochs } : {}) };
      const engine = await trainSegmentOnEngine(request);
      const reference = await trainSegment(request);
      expect(engine.status).toBe('completed');
      expect(engine.epochs).toHaveLength(EPOCHS);
      expect(reference.tensorsAfter, 'tensors the reference step leaves behind').toBe(reference.tensorsBefore);
      engine.epochs.forEach((report, i) => {
        const other = reference.epochs[i]!;
        expect(Math.abs(report.validationLoss - other.validationLoss), `epoch ${i + 1} validation loss`).toBeLessThan(LOSS_TOLERANCE);
        expect(Math.abs(report.trainLoss - other.trainLoss), `epoch ${i + 1} training loss`).toBeLessThan(LOSS_TOLERANCE);
      });
      const { weightDecay: _decay, maxGradientNorm: _limit, labelSmoothing: _epsilon, ...without } = configuration;
      const plain = await trainSegmentOnEngine({ ...request, configuration: without });
      const gap = Math.abs(plain.epochs.at(-1)!.validationLoss - engine.epochs.at(-1)!.validationLoss);
      expect(gap, 'the regularisers changed the trial by more than the tolerance').toBeGreaterThan(10 * LOSS_TOLERANCE);
    });
  }

  it('8 epochs straight equal 4 epochs, a checkpoint and 4 more, bit for bit', async () => {
    const configuration: TrialConfiguration = { ...base, optimizer: 'adam', learningRate: 0.01, weightDecay: 0.002, maxGradientNorm: 0.2, labelSmoothing: 0.1, schedule: 'cosine', warmupEpochs: 1, minFactor: 0 };
    const request = { trialId: 2, seed: 11, configuration, dataset: multiclass, datasetId: multiclass.id, fromEpoch: 0, toEpoch: 8, maxEpochs: 8 };
    const straight = await trainSegmentOnEngine(request);
    const first = await trainSegmentOnEngine({ ...request, toEpoch: 4 });
    const second = await trainSegmentOnEngine({ ...request, fromEpoch: 4, checkpoint: first.checkpoint! });
    const figures = (epochs: typeof straight.epochs) => epochs.map((e) => [e.epoch, e.trainLoss, e.validationLoss]);
    expect(figures([...first.epochs, ...second.epochs])).toStrictEqual(figures(straight.epochs));
    expect(second.checkpoint).toStrictEqual(straight.checkpoint);
  });
});
