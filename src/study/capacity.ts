import { availableParallelism, freemem } from 'node:os';
import { UserError } from '../core/errors.js';
import type { TrialConfiguration } from '../core/configuration.js';
import { denseShapes, weightCount } from '../core/size.js';
import { plannedTrialCount, samplerTraits } from '../samplers/index.js';
import type { StudyDefinition } from './definition.js';

/**
 * float32 copies of every parameter while a trial trains: the weights, their gradients and the
 * optimizer's state (Adam keeps two moments). Common practice (no source).
 */
export const COPIES_PER_PARAMETER = 4;
/** Activations kept for the backward pass, per unit and row of a batch (output, pre-activation, gradient). Common practice (no source). */
const ACTIVATION_COPIES = 3;
/** A wasm32 module addresses at most 4 GiB, so one worker's tfjs memory cannot exceed it. From memory. */
export const WASM_BYTES = 4 * 2 ** 30;
/**
 * Results one trial keeps in the main process while the study runs: its record, and per epoch one
 * curve point. Measured on the store benchmark's files (about 400 bytes of JSON per record, 240 per
 * epoch in the curve log) and doubled for the objects in memory.
 */
export const TRIAL_RECORD_BYTES = 1_000;
export const CURVE_POINT_BYTES = 500;
/** The share of the available memory a study's results may take. */
const RESULTS_SHARE = 0.5;

/** Weights and biases of an MLP with `depth` hidden layers of `width` units. */
export function parameterCount(inputs: number, depth: number, width: number, outputs: number): number {
  return weightCount({ depth, width }, inputs, outputs);
}

/** Bytes one trial of that network needs while it trains with batches of `batchSize` rows. */
export function trainingBytes(inputs: number, depth: number, width: number, outputs: number, batchSize: number): number {
  const weights = parameterCount(inputs, depth, width, outputs) * 4 * COPIES_PER_PARAMETER;
  const activations = batchSize * (depth * width + outputs) * 4 * ACTIVATION_COPIES;
  return weights + activations;
}

/**
 * Bytes one trial of a configuration's network needs while it trains (`trainingBytes` for a plain
 * stack; residual blocks add each normalisation's values and its row buffers).
 */
export function networkTrainingBytes(network: Pick<TrialConfiguration, 'depth' | 'width' | 'shape' | 'block'>, inputs: number, outputs: number, batchSize: number): number {
  const weights = weightCount(network, inputs, outputs) * 4 * COPIES_PER_PARAMETER;
  const norms = network.block === 'residual' ? 2 * network.width * (network.depth + 1) : 0;
  const units = denseShapes(network, inputs, outputs).reduce((sum, layer) => sum + layer.fanOut, 0) + norms;
  return weights + batchSize * units * 4 * ACTIVATION_COPIES;
}

/** Memory this process may use: the system's available memory, or the container's limit when lower. */
export function availableMemoryBytes(): number {
  const limit = typeof process.constrainedMemory === 'function' ? process.constrainedMemory() : 0;
  const free = freemem();
  return limit !== undefined && limit > 0 ? Math.min(free, limit) : free;
}

export interface CapacityInput {
  definition: StudyDefinition;
  /** Model inputs after one-hot encoding, and outputs. */
  inputCount: number;
  outputCount: number;
  threads?: number;
  /** @default {@link availableMemoryBytes} */
  availableBytes?: number;
}

const gib = (bytes: number): string => `${(bytes / 2 ** 30).toFixed(bytes < 2 ** 30 ? 2 : 1)} GiB`;
const count = (value: number): string => Math.round(value).toLocaleString('en-US');

/**
 * Checks, before the first trial, that the study can fit the machine (see README, "Sizes the machine
 * must hold"): every worker may train the largest network of the space at the largest batch size
 * at once, each within one wasm memory; and the results of every planned trial at full length fit
 * in half the available memory. Throws a {@link UserError} naming the field and the largest value that fits.
 */
export function checkCapacity(input: CapacityInput, file: string): void {
  const { definition, inputCount, outputCount } = input;
  const threads = input.threads ?? definition.threads ?? availableParallelism();
  const available = input.availableBytes ?? availableMemoryBytes();
  const { depth, width, batchSize } = definition.space;
  const batch = Math.max(...batchSize);
  const perWorker = Math.min(available / threads, WASM_BYTES);
  // The largest network: residual blocks when the space has them (each block two layers).
  const block = definition.space.block?.includes('residual') ? ('residual' as const) : undefined;
  const largest = (w: number) => ({ depth: depth.max, width: w, ...(block ? { block } : {}) });
  const needs = (w: number): number => networkTrainingBytes(largest(w), inputCount, outputCount, batch);
  if (needs(width.max) > perWorker) {
    let fits = 0;
    for (let step = 2 ** 30; step >= 1; step = Math.floor(step / 2)) if (needs(fits + step) <= perWorker) fits += step;
    const limit = perWorker === WASM_BYTES ? `one thread's wasm memory holds at most ${gib(WASM_BYTES)}` : `this machine has ${gib(available)} available for ${threads} thread${threads === 1 ? '' : 's'}`;
    const parameters = weightCount(largest(width.max), inputCount, outputCount);
    throw new UserError(
      'E_STUDY_TOO_LARGE',
      `${file}: space.width: max ${width.max} at depth up to ${depth.max} (${inputCount} inputs, batch ${batch}) gives ${count(parameters)} parameters, about ${gib(needs(width.max))} per trial while training; ` +
        `${limit}: ${fits >= width.min ? `keep width.max at or below ${fits}` : 'lower depth.max, the batch size or the number of threads'}`,
    );
  }
  const trials = plannedTrialCount(definition);
  const perTrial = TRIAL_RECORD_BYTES + CURVE_POINT_BYTES * definition.budget.maxEpochs;
  const room = available * RESULTS_SHARE;
  if (trials * perTrial > room) {
    const fromBudget = samplerTraits(definition.sampler.kind).trialsFromBudget;
    const field = fromBudget ? 'budget.trials' : 'budget.maxEpochs';
    const allowed = fromBudget ? `at most ${count(Math.floor(room / perTrial))} trials of ${definition.budget.maxEpochs} epochs` : `a smaller maxEpochs (${definition.sampler.kind} plans its trials from it)`;
    throw new UserError(
      'E_STUDY_TOO_LARGE',
      `${file}: ${field}: ${count(trials)} trials of up to ${definition.budget.maxEpochs} epochs would keep about ${gib(trials * perTrial)} of results in memory; ` +
        `this machine has ${gib(available)} available and a study may use half of it: ${allowed}`,
    );
  }
}
