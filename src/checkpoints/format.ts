/**
 * Checkpoints as bytes, so they can cross any transport and live in any checkpoint store:
 * the 4 bytes `RWCK`, the manifest's length as a little-endian uint32, the manifest as UTF-8 JSON,
 * zero padding to a multiple of 4, then every network variable and every optimizer variable as
 * float32 little-endian, concatenated in manifest order. No tfjs here: the coordinator reads
 * manifests without loading a training library.
 */
import type { OptimizerName, TrialConfiguration } from '../core/configuration.js';
import type { ClassFigures } from '../core/class-figures.js';

/** Version 2: one byte string (version 1 was a folder with checkpoint.json and weights.bin). */
export const CHECKPOINT_FORMAT_VERSION = 2;
const MAGIC = 'RWCK';

export interface VariableEntry {
  name: string;
  shape: number[];
}

export interface CheckpointManifest {
  formatVersion: number;
  trialId: number;
  /** Epochs trained when the checkpoint was written. */
  epoch: number;
  /** The trial's configuration (the key keeps its name from the first checkpoint format). */
  params: TrialConfiguration;
  variables: VariableEntry[];
  optimizer: { name: OptimizerName; iterations: number; variables: VariableEntry[] };
  /**
   * With early stopping: the best epoch so far and its goal score (what the rule needs to go on),
   * that epoch's network weights (`variables`, stored after the optimizer's; absent when the best
   * epoch is `epoch`, whose weights are the network's) and its per-class figures.
   */
  best?: { epoch: number; score: number; variables?: VariableEntry[]; classFigures?: ClassFigures };
}

/** A network or optimizer variable read back from a checkpoint. */
export interface NamedWeights {
  name: string;
  shape: number[];
  values: Float32Array;
}

/** The checkpoint's bytes: the manifest, then the variables' values in manifest order. */
export function encodeCheckpoint(manifest: CheckpointManifest, values: readonly Float32Array[]): Uint8Array {
  const json = Buffer.from(JSON.stringify(manifest), 'utf8');
  const headerBytes = 8 + json.length + ((4 - (json.length % 4)) % 4);
  const floats = values.reduce((sum, v) => sum + v.length, 0);
  const bytes = new Uint8Array(headerBytes + floats * 4);
  const view = new DataView(bytes.buffer);
  bytes.set(Buffer.from(MAGIC, 'ascii'), 0);
  view.setUint32(4, json.length, true);
  bytes.set(json, 8);
  let offset = headerBytes;
  for (const array of values) {
    for (let i = 0; i < array.length; i++, offset += 4) view.setFloat32(offset, array[i]!, true);
  }
  return bytes;
}

/** Decodes checkpoint bytes: the manifest and every stored variable (network then optimizer), in manifest order. */
export function decodeCheckpoint(bytes: Uint8Array): { manifest: CheckpointManifest; network: NamedWeights[]; optimizer: NamedWeights[]; best?: NamedWeights[] } {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const header = decodeHeader(bytes);
  const manifest = header.manifest;
  let offset = header.valuesStart;
  const take = (e: VariableEntry): NamedWeights => {
    const size = e.shape.reduce((a, b) => a * b, 1);
    if (offset + size * 4 > bytes.length) throw new Error(`checkpoint of trial ${manifest.trialId} is shorter than its manifest says`);
    const values = new Float32Array(size);
    for (let i = 0; i < size; i++, offset += 4) values[i] = view.getFloat32(offset, true);
    return { name: e.name, shape: e.shape, values };
  };
  const network = manifest.variables.map(take);
  const optimizer = manifest.optimizer.variables.map(take);
  const best = manifest.best?.variables?.map(take);
  if (offset !== bytes.length) throw new Error(`checkpoint of trial ${manifest.trialId} is longer than its manifest says`);
  return { manifest, network, optimizer, ...(best ? { best } : {}) };
}

/**
 * The checkpoint with its early-stopping section replaced: the best epoch and score, and the best
 * epoch's network weights when that epoch is not the checkpoint's own.
 */
export function withBestEpoch(bytes: Uint8Array, best: { epoch: number; score: number; weights?: readonly NamedWeights[]; classFigures?: ClassFigures }): Uint8Array {
  const { manifest, network, optimizer } = decodeCheckpoint(bytes);
  const weights = best.epoch === manifest.epoch ? undefined : best.weights;
  if (best.epoch !== manifest.epoch && !weights) throw new Error(`checkpoint of trial ${manifest.trialId}: the weights of best epoch ${best.epoch} are missing`);
  const section: NonNullable<CheckpointManifest['best']> = { epoch: best.epoch, score: best.score };
  if (weights) section.variables = weights.map(({ name, shape }) => ({ name, shape }));
  if (best.classFigures) section.classFigures = best.classFigures;
  return encodeCheckpoint({ ...manifest, best: section }, [...network, ...optimizer, ...(weights ?? [])].map((w) => w.values));
}

/** The checkpoint with its network weights replaced by `weights` (same names and shapes), the rest unchanged. */
export function withNetwork(bytes: Uint8Array, weights: readonly NamedWeights[]): Uint8Array {
  const { manifest, network, optimizer, best } = decodeCheckpoint(bytes);
  if (weights.length !== network.length || weights.some((w, i) => w.name !== network[i]!.name || w.values.length !== network[i]!.values.length)) {
    throw new Error(`checkpoint of trial ${manifest.trialId}: the replacement weights do not match its network`);
  }
  return encodeCheckpoint(manifest, [...weights, ...optimizer, ...(best ?? [])].map((w) => w.values));
}

/** The network weights to export: the best epoch's with early stopping, else the checkpoint's own; and their epoch. */
export function bestCheckpointWeights(bytes: Uint8Array): { epoch: number; weights: NamedWeights[] } {
  const { manifest, network, best } = decodeCheckpoint(bytes);
  if (manifest.best && best) return { epoch: manifest.best.epoch, weights: best };
  return { epoch: manifest.best?.epoch ?? manifest.epoch, weights: network };
}

/** The manifest alone (trial, epoch, configuration), without decoding the values. */
export function checkpointManifest(bytes: Uint8Array): CheckpointManifest {
  return decodeHeader(bytes).manifest;
}

function decodeHeader(bytes: Uint8Array): { manifest: CheckpointManifest; valuesStart: number } {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (bytes.length < 8 || Buffer.from(bytes.subarray(0, 4)).toString('ascii') !== MAGIC) throw new Error('not a rungwise checkpoint');
  const jsonLength = view.getUint32(4, true);
  if (8 + jsonLength > bytes.length) throw new Error('checkpoint is shorter than its header says');
  const manifest = JSON.parse(Buffer.from(bytes.subarray(8, 8 + jsonLength)).toString('utf8')) as CheckpointManifest;
  if (manifest.formatVersion !== CHECKPOINT_FORMAT_VERSION) {
    throw new Error(`checkpoint format version ${manifest.formatVersion}, expected ${CHECKPOINT_FORMAT_VERSION}`);
  }
  return { manifest, valuesStart: 8 + jsonLength + ((4 - (jsonLength % 4)) % 4) };
}

/** The network weights of a checkpoint, in layer order (kernel, bias per dense layer, output layer last). */
export function checkpointWeights(bytes: Uint8Array): NamedWeights[] {
  return decodeCheckpoint(bytes).network;
}

/**
 * tfjs 4.22's Adam keeps the running products beta1^t and beta2^t in these private variables.
 * Its setWeights() recomputes them as pow(beta, iterations + 1), which can differ in the last
 * float32 bits from the running product; saving them keeps a resumed trial bit-exact.
 */
export const ADAM_POWERS = ['accBeta1', 'accBeta2'] as const;
/** The checkpoint name of Adam's running power of beta1 ('accBeta1') or beta2 ('accBeta2'). */
export const adamPowerName = (field: (typeof ADAM_POWERS)[number]): string => `adam/${field}`;

/**
 * Throws unless the checkpoint belongs to the expected trial, epoch and optimizer and its network
 * variables have the names and shapes of `variables`, in order.
 */
export function checkCheckpoint(
  manifest: CheckpointManifest,
  network: readonly NamedWeights[],
  expected: { trialId: number; epoch: number; optimizer: OptimizerName },
  variables: readonly { name: string; shape: readonly number[] }[],
): void {
  const where = `checkpoint of trial ${expected.trialId}`;
  if (manifest.trialId !== expected.trialId || manifest.epoch !== expected.epoch || manifest.optimizer.name !== expected.optimizer) {
    throw new Error(
      `${where}: holds trial ${manifest.trialId} at epoch ${manifest.epoch} (${manifest.optimizer.name}), ` +
        `expected trial ${expected.trialId} at epoch ${expected.epoch} (${expected.optimizer})`,
    );
  }
  if (network.length !== variables.length) throw new Error(`${where}: ${network.length} network variables, the network has ${variables.length}`);
  variables.forEach((variable, i) => {
    const stored = network[i]!;
    if (stored.name !== variable.name || stored.shape.join('x') !== variable.shape.join('x')) {
      throw new Error(`${where}: variable ${i} is ${stored.name} [${stored.shape}], the network has ${variable.name} [${variable.shape}]`);
    }
  });
}
