/**
 * One trial laid out in engine memory: the descriptor, its buffers and weights, written once when
 * the trial starts. Training crosses into WebAssembly once per step; dropout masks and the
 * epoch's shuffle order are drawn in JavaScript from the trial's seeded streams (the same draws as
 * the tfjs path) and written into memory before the step that uses them.
 */
import type { SharedDataset } from '../../core/job.js';
import { permutation, stream, type Rng } from '../../random/streams.js';
import { ACTIVATIONS, OPTIMIZERS, TASKS, type TrialConfiguration } from '../../core/configuration.js';
import { initialKernel } from '../shared/initial-weights.js';
import { layerPlan, type DenseLayerPlan } from '../shared/layer-plan.js';
import { ADAM, MOMENTUM } from '../shared/optimizer-constants.js';
import { CONSTANT, descriptorBytes, layerWord, WORD, type LayerField } from './layout.js';
import { align16, engine, padColumns, reserve } from './module.js';
import { residentData, type ResidentData } from './resident-data.js';
import { setWeightDecayStep, writeRegularisers } from './regularisers.js';

/** Rows the evaluation pass runs at once (buffers hold at least this many rows). */
export const EVALUATION_CHUNK_ROWS = 256;

/** What a trial trains: its id and seed (initial weights, dropout, shuffles), configuration and data. */
export interface EngineTrialSpec {
  trialId: number;
  seed: number;
  configuration: TrialConfiguration;
  dataset: SharedDataset;
}

interface LayerShape {
  fanIn: number;
  fanOut: number;
  inStride: number;
  outStride: number;
  /** Names, initial rule, and what follows the layer (src/trainers/shared/layer-plan.ts). */
  plan: DenseLayerPlan;
  /** Byte addresses of the layer's buffers (0 when the trial does not use one). */
  at: Record<Exclude<LayerField, 'fanIn' | 'fanOut' | 'inStride' | 'outStride'>, number>;
}

/** A bump allocator over engine memory from `start`, 16-byte aligned. */
function allocator(start: number): { take(bytes: number): number; end(): number } {
  let next = align16(start);
  return {
    take(bytes) {
      const at = next;
      next = align16(next + bytes);
      return at;
    },
    end: () => next,
  };
}

/** One trial in engine memory. Create it with {@link EngineTrial.create}; it stays valid until the next trial is created in this thread. */
export class EngineTrial {
  /** Optimizer steps taken over the trial's life (restored from checkpoints). */
  iterations = 0;

  private constructor(
    readonly spec: EngineTrialSpec,
    private readonly data: ResidentData,
    private readonly net: number,
    readonly layers: LayerShape[],
    private readonly capacityRows: number,
    private readonly outputsAt: number,
  ) {}

  static create(spec: EngineTrialSpec): EngineTrial {
    const { configuration, dataset } = spec;
    const data = residentData(dataset);
    const capacityRows = Math.max(configuration.batchSize, EVALUATION_CHUNK_ROWS);
    const memory = allocator(data.end);
    const plans = layerPlan(spec.trialId, configuration, dataset.inputCount, dataset.outputCount);
    const net = memory.take(descriptorBytes(plans.length));
    const buffers = {
      order: memory.take(dataset.train.rows * 4),
      batchX: memory.take(capacityRows * data.stride * 4),
      batchY: memory.take(capacityRows * 4),
    };
    const { layers, scratchFloats } = layOutLayers(plans, configuration, capacityRows, memory);
    const residual = residualBuffers(configuration, capacityRows, memory);
    const scratch = memory.take(scratchFloats * 4);
    const outputsAt = memory.take(dataset.validation.rows * dataset.outputCount * 4);
    const classWeights = dataset.classWeights ? memory.take(dataset.classWeights.length * 4) : 0;
    reserve(memory.end());
    new Uint8Array(engine().memory.buffer, data.end, memory.end() - data.end).fill(0);
    writeDescriptor(net, spec, layers, { ...buffers, ...residual, trainX: data.trainX, trainY: data.trainY, scratch, classWeights });
    writeRegularisers(net, configuration, dataset);

    const trial = new EngineTrial(spec, data, net, layers, capacityRows, outputsAt);
    layers.forEach((layer, l) => {
      trial.writeMatrix(layer.at.kernel, layer.outStride, initialKernel(layer.plan.rule, layer.fanIn, layer.fanOut, stream(spec.seed, 'init', l)), layer.fanOut);
      if (layer.at.normGain !== 0) trial.floats(layer.at.normGain, layer.fanIn).fill(1);
    });
    return trial;
  }

  /** `count` floats of engine memory from byte address `at`. */
  floats(at: number, count: number): Float32Array {
    return new Float32Array(engine().memory.buffer, at, count);
  }

  /** Writes a rows x columns row-major matrix into a buffer of row stride `stride`. */
  writeMatrix(at: number, stride: number, values: Float32Array, columns: number): void {
    const rows = values.length / columns;
    const target = this.floats(at, rows * stride);
    for (let r = 0; r < rows; r++) target.set(values.subarray(r * columns, (r + 1) * columns), r * stride);
  }

  /** Reads `rows` x `columns` from a buffer of row stride `stride`, without the padding. */
  readMatrix(at: number, stride: number, rows: number, columns: number): Float32Array {
    const source = this.floats(at, rows * stride);
    const values = new Float32Array(rows * columns);
    for (let r = 0; r < rows; r++) values.set(source.subarray(r * stride, r * stride + columns), r * columns);
    return values;
  }

  /** Descriptor float32 constant (e.g. Adam's running powers). */
  constant(name: keyof typeof CONSTANT): number {
    return this.floats(this.net, CONSTANT.power2 + 1)[CONSTANT[name]]!;
  }

  setConstant(name: keyof typeof CONSTANT, value: number): void {
    this.floats(this.net, CONSTANT.power2 + 1)[CONSTANT[name]] = value;
  }

  /** Sets the learning rate of the next steps (float32, as tfjs's scalar of -learningRate). */
  setLearningRate(learningRate: number): void {
    this.setConstant('negativeLearningRate', -learningRate);
    setWeightDecayStep(this.net, this.spec.configuration, learningRate);
  }

  /** Rewrites the regularisers' words for `configuration`'s (benchmarks time one trial's steps with and without them). */
  setRegularisers(configuration: TrialConfiguration): void {
    writeRegularisers(this.net, configuration, this.spec.dataset);
  }

  /** 1 applies the optimizer after each step's gradients, 0 leaves the gradients only (for checking). */
  setUpdating(updating: boolean): void {
    new Int32Array(engine().memory.buffer, this.net, WORD.scratch + 1)[WORD.update] = updating ? 1 : 0;
  }

  /** Writes the shuffle order the next steps read (row indices into the training set). */
  setOrder(order: Int32Array): void {
    const at = new Int32Array(engine().memory.buffer, this.net, WORD.scratch + 1)[WORD.order]!;
    new Int32Array(engine().memory.buffer, at, order.length).set(order);
  }

  /** Draws this step's inverted-dropout masks, layer after layer (those followed by dropout), `rows` x width each (as the tfjs path draws them). */
  drawMasks(rng: Rng, rows: number): void {
    const { dropout } = this.spec.configuration;
    const keep = 1 / (1 - dropout);
    for (const layer of this.layers) {
      if (layer.at.mask === 0) continue;
      const mask = this.floats(layer.at.mask, rows * layer.outStride);
      for (let r = 0; r < rows; r++) {
        const row = r * layer.outStride;
        for (let c = 0; c < layer.fanOut; c++) mask[row + c] = rng() >= dropout ? keep : 0;
      }
    }
  }

  /** One step on order[start .. start + rows): the batch's mean data loss. */
  step(start: number, rows: number): number {
    if (rows > this.capacityRows) throw new Error(`a step of ${rows} rows exceeds the trial's ${this.capacityRows}-row buffers`);
    const loss = engine().trainStep(this.net, start, rows);
    this.iterations++;
    return loss;
  }

  /**
   * One epoch in the order `permutation(rows, stream(seed, 'shuffle', epoch))`: the mean over
   * batches of each batch's data loss (every batch weighs the same, a shorter last one too).
   */
  trainEpoch(epoch: number): number {
    const { seed, configuration, dataset } = this.spec;
    const rows = dataset.train.rows;
    this.setOrder(permutation(rows, stream(seed, 'shuffle', epoch)));
    let sum = 0;
    let batches = 0;
    for (let start = 0; start < rows; start += configuration.batchSize, batches++) {
      const size = Math.min(rows, start + configuration.batchSize) - start;
      if (configuration.dropout > 0) this.drawMasks(stream(seed, 'dropout', epoch, batches), size);
      sum += this.step(start, size);
    }
    return sum / batches;
  }

  /** Mean validation loss and the output function's values (rows x outputCount). */
  evaluate(): { loss: number; outputs: Float32Array } {
    const { validation, outputCount } = this.spec.dataset;
    const loss = engine().evaluate(this.net, this.data.validationX, this.data.validationY, validation.rows, this.capacityRows, this.outputsAt);
    return { loss, outputs: this.floats(this.outputsAt, validation.rows * outputCount).slice() };
  }
}

type Allocator = ReturnType<typeof allocator>;

/** Each layer's shape and the engine memory of its weights, gradients, optimizer slots and row buffers. */
function layOutLayers(
  plans: readonly DenseLayerPlan[],
  configuration: EngineTrialSpec['configuration'],
  capacityRows: number,
  memory: Allocator,
): { layers: LayerShape[]; scratchFloats: number } {
  const slots = configuration.optimizer === 'adam' ? 2 : configuration.optimizer === 'momentum' ? 1 : 0;
  const dropout = configuration.dropout > 0;
  let scratchFloats = 0;
  const layers: LayerShape[] = [];
  plans.forEach((plan, l) => {
    const { fanIn, fanOut } = plan;
    const inStride = padColumns(fanIn);
    const outStride = padColumns(fanOut);
    if (l > 0) scratchFloats = Math.max(scratchFloats, fanOut * inStride);
    const kernelBytes = fanIn * outStride * 4;
    const rowsBytes = capacityRows * outStride * 4;
    layers.push({
      fanIn,
      fanOut,
      inStride,
      outStride,
      plan,
      at: {
        kernel: memory.take(kernelBytes),
        bias: memory.take(outStride * 4),
        kernelGradient: memory.take(kernelBytes),
        biasGradient: memory.take(outStride * 4),
        kernelSlot1: slots >= 1 ? memory.take(kernelBytes) : 0,
        biasSlot1: slots >= 1 ? memory.take(outStride * 4) : 0,
        kernelSlot2: slots >= 2 ? memory.take(kernelBytes) : 0,
        biasSlot2: slots >= 2 ? memory.take(outStride * 4) : 0,
        preActivation: memory.take(rowsBytes),
        activated: memory.take(rowsBytes),
        output: plan.masked && dropout ? memory.take(rowsBytes) : 0,
        mask: plan.masked && dropout ? memory.take(rowsBytes) : 0,
        delta: memory.take(rowsBytes),
        ...normBuffers(plan, slots, capacityRows, memory),
      },
    });
  });
  return { layers, scratchFloats };
}

type NormField = Extract<LayerField, `norm${string}` | 'inverseStd'>;

/** The buffers of the layer normalisation a layer reads (all 0 when it reads none). */
function normBuffers(plan: DenseLayerPlan, slots: number, capacityRows: number, memory: Allocator): Record<NormField, number> {
  const stride = padColumns(plan.fanIn);
  const vector = (): number => memory.take(stride * 4);
  const rows = (): number => memory.take(capacityRows * stride * 4);
  if (!plan.norm) {
    const none = 0;
    return { normGain: none, normBias: none, normGainGradient: none, normBiasGradient: none, normGainSlot1: none, normBiasSlot1: none, normGainSlot2: none, normBiasSlot2: none, normalised: none, normOutput: none, inverseStd: none, normActivated: none };
  }
  return {
    normGain: vector(),
    normBias: vector(),
    normGainGradient: vector(),
    normBiasGradient: vector(),
    normGainSlot1: slots >= 1 ? vector() : 0,
    normBiasSlot1: slots >= 1 ? vector() : 0,
    normGainSlot2: slots >= 2 ? vector() : 0,
    normBiasSlot2: slots >= 2 ? vector() : 0,
    normalised: rows(),
    normOutput: rows(),
    inverseStd: memory.take(capacityRows * 4),
    normActivated: plan.norm.activated ? rows() : 0,
  };
}

/** Residual blocks: the stream, its gradient and a normalisation's output gradient, rows x width each (0 for the plain stack). */
function residualBuffers(configuration: EngineTrialSpec['configuration'], capacityRows: number, memory: Allocator): { residual: number; residualDelta: number; normDelta: number } {
  if (configuration.block !== 'residual') return { residual: 0, residualDelta: 0, normDelta: 0 };
  const bytes = capacityRows * padColumns(configuration.width) * 4;
  return { residual: memory.take(bytes), residualDelta: memory.take(bytes), normDelta: memory.take(bytes) };
}

/** Where the trial's shared buffers are in engine memory. */
interface TrialBuffers {
  trainX: number;
  trainY: number;
  order: number;
  batchX: number;
  batchY: number;
  scratch: number;
  classWeights: number;
  residual: number;
  residualDelta: number;
  normDelta: number;
}

/** Writes the network descriptor the engine reads: the configuration as words, its float32 constants, each layer's shape and buffers. */
function writeDescriptor(net: number, spec: EngineTrialSpec, layers: readonly LayerShape[], buffers: TrialBuffers): void {
  const { configuration, dataset } = spec;
  const words = new Int32Array(engine().memory.buffer, net, descriptorBytes(layers.length) / 4);
  const floats = new Float32Array(words.buffer, net, words.length);
  words[WORD.depth] = configuration.depth;
  words[WORD.activation] = ACTIVATIONS.indexOf(configuration.activation);
  words[WORD.task] = TASKS.indexOf(dataset.task);
  words[WORD.optimizer] = OPTIMIZERS.indexOf(configuration.optimizer);
  words[WORD.outputs] = dataset.outputCount;
  words[WORD.dropout] = configuration.dropout > 0 ? 1 : 0;
  words[WORD.update] = 1;
  words[WORD.l2] = configuration.l2 > 0 ? 1 : 0;
  for (const field of ['trainX', 'trainY', 'order', 'batchX', 'batchY', 'scratch', 'classWeights', 'residual', 'residualDelta', 'normDelta'] as const) words[WORD[field]] = buffers[field];
  words[WORD.blocks] = configuration.block === 'residual' ? 1 : 0;
  if (dataset.classWeights) new Float32Array(engine().memory.buffer, buffers.classWeights, dataset.classWeights.length).set(dataset.classWeights);
  // float32 constants computed as tfjs computes its scalars (in double, then rounded)
  floats[CONSTANT.negativeLearningRate] = -configuration.learningRate;
  floats[CONSTANT.twiceL2] = 2 * configuration.l2;
  floats[CONSTANT.momentum] = MOMENTUM;
  floats[CONSTANT.beta1] = ADAM.beta1;
  floats[CONSTANT.oneMinusBeta1] = 1 - ADAM.beta1;
  floats[CONSTANT.beta2] = ADAM.beta2;
  floats[CONSTANT.oneMinusBeta2] = 1 - ADAM.beta2;
  floats[CONSTANT.epsilon] = ADAM.epsilon;
  floats[CONSTANT.power1] = ADAM.beta1;
  floats[CONSTANT.power2] = ADAM.beta2;
  layers.forEach((layer, l) => {
    words[layerWord(l, 'fanIn')] = layer.fanIn;
    words[layerWord(l, 'fanOut')] = layer.fanOut;
    words[layerWord(l, 'inStride')] = layer.inStride;
    words[layerWord(l, 'outStride')] = layer.outStride;
    for (const [field, at] of Object.entries(layer.at)) words[layerWord(l, field as LayerField)] = at;
  });
}
