import * as tf from '@tensorflow/tfjs';
import type { EpochReport, TrainResult } from '../../core/job.js';
import type { TrainRequest } from '../contract.js';
import type { OptimizerName } from '../../core/configuration.js';
import { permutation, stream } from '../../random/streams.js';
import { ConstantCachingAdam } from './adam.js';
import { checkpointBytes, restoreCheckpoint } from './checkpoint.js';
import { datasetTensors, type DatasetTensors } from './data-cache.js';
import { completeJob, lastEpochOf, runEpochs } from '../shared/epochs.js';
import { ADAM, MOMENTUM } from '../shared/optimizer-constants.js';
import { smoothedTargets, updatesAfterBackward } from '../shared/regularisers.js';
import { regularisedStep, smoothLabels } from './regularisers.js';
import { createNetwork, disposeNetwork, forward, l2Penalty, lossFromLogits, networkSpec, outputFromLogits, type Network } from './network.js';

export { ADAM, MOMENTUM } from '../shared/optimizer-constants.js';

export function createOptimizer(name: OptimizerName, learningRate: number): tf.Optimizer {
  if (name === 'sgd') return tf.train.sgd(learningRate);
  if (name === 'momentum') return tf.train.momentum(learningRate, MOMENTUM);
  // Passed explicitly: tfjs would otherwise use the backend's epsilon (1e-7 on wasm).
  return new ConstantCachingAdam(learningRate, ADAM.beta1, ADAM.beta2, ADAM.epsilon);
}

/** Sets an optimizer's learning rate for the next steps (sgd and momentum through tfjs's own setter). */
export function setOptimizerLearningRate(optimizer: tf.Optimizer, learningRate: number): void {
  if (optimizer instanceof ConstantCachingAdam) optimizer.setLearningRate(learningRate);
  else if (optimizer instanceof tf.SGDOptimizer) {
    if ((optimizer as unknown as { learningRate: number }).learningRate !== learningRate) optimizer.setLearningRate(learningRate);
  } else throw new Error(`no learning-rate setter for ${optimizer.getClassName()}`);
}

/**
 * Disposes an optimizer and everything it holds. tfjs 4.22's MomentumOptimizer.dispose() does not
 * dispose the learning-rate scalar `c` it inherits from SGDOptimizer, so that one is released here.
 */
export function disposeOptimizer(optimizer: tf.Optimizer): void {
  optimizer.dispose();
  const inherited = (optimizer as unknown as { c?: tf.Tensor }).c;
  if (inherited && !inherited.isDisposed) inherited.dispose();
}

const seconds = (since: number): number => (performance.now() - since) / 1000;

/**
 * One epoch over the training rows in the order `permutation(rows, stream(seed, 'shuffle', epoch))`.
 * Returns the training loss: the mean over the epoch's batches of each batch's data loss (the L2
 * penalty is part of the minimised objective but not of the reported loss; with label smoothing the
 * loss is against the smoothed targets, as minimised; every batch weighs
 * the same, including a shorter last one).
 *
 * Speed: the epoch's rows are gathered into shuffled order once, each batch is a contiguous
 * `tf.slice` of them, and the batch losses accumulate in one running-sum tensor read once per
 * epoch, so a batch costs no upload and no read-back. The batches hold the same rows in the same
 * order as gathering per batch, and the sum adds the losses in batch order, as `addN` did.
 */
function trainEpoch(request: TrainRequest, network: Network, optimizer: tf.Optimizer, data: DatasetTensors, epoch: number): number {
  const { configuration, seed, dataset } = request;
  const rows = dataset.train.rows;
  const order = permutation(rows, stream(seed, 'shuffle', epoch));
  const smoothing = smoothedTargets(configuration, dataset.task, dataset.outputCount);
  const { x: shuffledX, y: shuffledY, weights: shuffledWeights } = tf.tidy(() => {
    const index = tf.tensor1d(order, 'int32');
    return { x: tf.gather(data.trainX, index), y: tf.gather(data.trainY, index), weights: data.trainWeights && tf.gather(data.trainWeights, index) };
  });
  let lossSum: tf.Scalar | undefined;
  let batches = 0;
  try {
    for (let start = 0; start < rows; batches++, start += configuration.batchSize) {
      const size = Math.min(rows, start + configuration.batchSize) - start;
      const batch = batches;
      const previousSum = lossSum;
      lossSum = tf.tidy(() => {
        const x = tf.slice(shuffledX, [start, 0], [size, -1]);
        const y = tf.slice(shuffledY, [start, 0], [size, -1]);
        const weights = shuffledWeights && tf.slice(shuffledWeights, [start, 0], [size, -1]);
        const dropout = configuration.dropout > 0 ? { rate: configuration.dropout, rng: stream(seed, 'dropout', epoch, batch) } : undefined;
        let batchLoss: tf.Scalar | undefined;
        const objective = (): tf.Scalar => {
          const dataLoss = lossFromLogits(dataset.task, forward(network, x, dropout), smoothing ? smoothLabels(y, smoothing) : y, weights);
          // A copy is kept: minimize() disposes the tensor f returns.
          batchLoss = tf.keep(tf.clone(dataLoss));
          return configuration.l2 > 0 ? tf.add(dataLoss, l2Penalty(network, configuration.l2)) : dataLoss;
        };
        if (updatesAfterBackward(configuration)) regularisedStep(optimizer, objective, network, configuration);
        else optimizer.minimize(objective, false, network.variables);
        if (!previousSum) return batchLoss!;
        const sum = tf.add(previousSum, batchLoss!) as tf.Scalar;
        batchLoss!.dispose(); // kept above, so the scope does not release it
        return sum;
      });
      if (previousSum && previousSum !== lossSum) previousSum.dispose();
    }
    const sum = lossSum!;
    return tf.tidy(() => tf.div(sum, batches).dataSync()[0]!);
  } finally {
    lossSum?.dispose();
    shuffledX.dispose();
    shuffledY.dispose();
    shuffledWeights?.dispose();
  }
}

/** Validation loss and the network outputs for every validation row, in one forward pass. */
function validate(request: TrainRequest, network: Network, data: DatasetTensors): { loss: number; outputs: Float32Array } {
  return tf.tidy(() => {
    const logits = forward(network, data.validationX);
    const loss = lossFromLogits(request.dataset.task, logits, data.validationY).dataSync()[0]!;
    const outputs = outputFromLogits(request.dataset.task, logits).dataSync() as Float32Array;
    return { loss, outputs };
  });
}

/**
 * Trains epochs `fromEpoch + 1 .. toEpoch` of one trial with a custom loop, continuing from
 * `checkpoint` when `fromEpoch > 0`; a completed segment returns the checkpoint at `toEpoch`.
 * Each epoch report goes to `onEpoch` as the epoch ends.
 *
 * A loss that stops being finite or runs away (`divergenceReason`) ends the segment as `diverged` (no checkpoint is returned,
 * and the diverged epoch has no report since its figures are not numbers).
 * Every tensor the trial creates (network, optimizer slots) is disposed before returning, so
 * `tensorsAfter === tensorsBefore` unless something leaked; the data set's tensors are cached per
 * thread and created before `tensorsBefore` is read.
 */
export async function trainSegment(request: TrainRequest, onEpoch?: (report: EpochReport) => void): Promise<TrainResult> {
  const started = performance.now();
  const { dataset, configuration } = request;
  const data = datasetTensors(dataset);
  const tensorsBefore = tf.memory().numTensors;
  let epochs: EpochReport[] = [];
  let divergence: TrainResult['divergence'];
  let completed: ReturnType<typeof completeJob> | undefined;

  const network = createNetwork(networkSpec(request.trialId, request.seed, configuration, dataset.inputCount, dataset.outputCount));
  const optimizer = createOptimizer(configuration.optimizer, configuration.learningRate);
  try {
    if (request.fromEpoch > 0) {
      if (!request.checkpoint) throw new Error(`trial ${request.trialId}: fromEpoch is ${request.fromEpoch} but no checkpoint was given`);
      const expected = { trialId: request.trialId, epoch: request.fromEpoch, optimizer: configuration.optimizer };
      await restoreCheckpoint(request.checkpoint, expected, network.variables, optimizer);
    }
    const run = runEpochs(
      request,
      {
        trainEpoch: (epoch) => trainEpoch(request, network, optimizer, data, epoch),
        validate: () => validate(request, network, data),
        setLearningRate: (rate) => setOptimizerLearningRate(optimizer, rate),
        snapshot: () => network.variables.map((v) => ({ name: v.name, shape: [...v.shape], values: (v.dataSync() as Float32Array).slice() })),
      },
      onEpoch,
    );
    ({ epochs, divergence } = run);
    if (!divergence) {
      const bytes = await checkpointBytes({ trialId: request.trialId, epoch: lastEpochOf(request, run.stopping), configuration }, network.variables, optimizer);
      completed = completeJob(request, run.stopping, bytes, () => validate(request, network, data).outputs);
    }
  } finally {
    disposeOptimizer(optimizer);
    disposeNetwork(network);
  }
  const result: TrainResult = {
    trialId: request.trialId,
    status: divergence ? 'diverged' : 'completed',
    epochs,
    workerSeconds: seconds(started),
    tensorsBefore,
    tensorsAfter: tf.memory().numTensors,
  };
  if (divergence) result.divergence = divergence;
  if (completed) Object.assign(result, completed);
  return result;
}
