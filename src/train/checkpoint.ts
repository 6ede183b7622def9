/**
 * Checkpoints: a directory with `checkpoint.json` (the manifest) and `weights.bin` (every network
 * variable, then every optimizer variable, float32 little-endian, concatenated in manifest order).
 */
import * as tf from '@tensorflow/tfjs';
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { writeFolderAtomically } from '../files/atomic-folder.js';
import type { OptimizerName, TrialParams } from '../study/definition.js';

export const CHECKPOINT_FORMAT_VERSION = 1;
const MANIFEST_FILE = 'checkpoint.json';
const WEIGHTS_FILE = 'weights.bin';

/**
 * tfjs 4.22's Adam keeps the running products beta1^t and beta2^t in these private variables.
 * Its setWeights() recomputes them as pow(beta, iterations + 1), which can differ in the last
 * float32 bits from the running product; saving them keeps a resumed trial bit-exact.
 */
const ADAM_POWERS = ['accBeta1', 'accBeta2'] as const;
const adamPowerName = (field: string): string => `adam/${field}`;

export interface VariableEntry {
  name: string;
  shape: number[];
}

export interface CheckpointManifest {
  formatVersion: number;
  trialId: number;
  /** Epochs trained when the checkpoint was written. */
  epoch: number;
  params: TrialParams;
  variables: VariableEntry[];
  optimizer: { name: OptimizerName; iterations: number; variables: VariableEntry[] };
}

/** A network weight read back from a checkpoint. */
export interface NamedWeights {
  name: string;
  shape: number[];
  values: Float32Array;
}

/** An optimizer weight as tfjs's getWeights()/setWeights() exchange it. */
interface NamedTensor {
  name: string;
  tensor: tf.Tensor;
}

type AdamPowers = Partial<Record<(typeof ADAM_POWERS)[number], tf.Variable>>;

async function optimizerState(optimizer: tf.Optimizer): Promise<{ iterations: number; tensors: NamedTensor[]; owned: tf.Tensor[] }> {
  const weights = await optimizer.getWeights();
  // The first entry is the iteration count, a fresh scalar tfjs created for us.
  const [iterations, ...slots] = weights;
  const owned = iterations ? [iterations.tensor] : [];
  const tensors = [...slots];
  const powers = optimizer as unknown as AdamPowers;
  for (const field of ADAM_POWERS) {
    const variable = powers[field];
    if (variable) tensors.push({ name: adamPowerName(field), tensor: variable });
  }
  return { iterations: optimizer.iterations, tensors, owned };
}

function entry(named: { name: string; tensor: tf.Tensor } | tf.Variable): VariableEntry & { tensor: tf.Tensor } {
  return 'tensor' in named ? { name: named.name, shape: named.tensor.shape, tensor: named.tensor } : { name: named.name, shape: named.shape, tensor: named };
}

function encode(tensors: tf.Tensor[]): Buffer {
  const total = tensors.reduce((sum, t) => sum + t.size, 0);
  const buffer = Buffer.alloc(total * 4);
  let offset = 0;
  for (const tensor of tensors) {
    for (const value of tensor.dataSync()) {
      buffer.writeFloatLE(value, offset);
      offset += 4;
    }
  }
  return buffer;
}

/**
 * Writes the checkpoint to `dir`: first into a sibling temporary directory, then renamed into
 * place, so a reader never sees a half-written checkpoint.
 */
export async function writeCheckpoint(
  dir: string,
  info: { trialId: number; epoch: number; params: TrialParams },
  variables: tf.Variable[],
  optimizer: tf.Optimizer,
): Promise<void> {
  const state = await optimizerState(optimizer);
  try {
    const network = variables.map(entry);
    const slots = state.tensors.map(entry);
    const manifest: CheckpointManifest = {
      formatVersion: CHECKPOINT_FORMAT_VERSION,
      ...info,
      variables: network.map(({ name, shape }) => ({ name, shape })),
      optimizer: { name: info.params.optimizer, iterations: state.iterations, variables: slots.map(({ name, shape }) => ({ name, shape })) },
    };
    const bytes = encode([...network, ...slots].map((e) => e.tensor));
    // A checkpoint always replaces the trial's previous one.
    await writeFolderAtomically(dir, () => true, async (partial) => {
      await writeFile(join(partial, WEIGHTS_FILE), bytes);
      await writeFile(join(partial, MANIFEST_FILE), `${JSON.stringify(manifest, null, 2)}\n`);
    }, 'checkpoint');
  } finally {
    tf.dispose(state.owned);
  }
}

/** Reads a checkpoint's manifest and every stored variable (network then optimizer), in manifest order. */
export async function readCheckpoint(dir: string): Promise<{ manifest: CheckpointManifest; network: NamedWeights[]; optimizer: NamedWeights[] }> {
  const manifest = JSON.parse(await readFile(join(dir, MANIFEST_FILE), 'utf8')) as CheckpointManifest;
  if (manifest.formatVersion !== CHECKPOINT_FORMAT_VERSION) {
    throw new Error(`${join(dir, MANIFEST_FILE)}: format version ${manifest.formatVersion}, expected ${CHECKPOINT_FORMAT_VERSION}`);
  }
  const bytes = await readFile(join(dir, WEIGHTS_FILE));
  let offset = 0;
  const take = (e: VariableEntry): NamedWeights => {
    const size = e.shape.reduce((a, b) => a * b, 1);
    if (offset + size * 4 > bytes.length) throw new Error(`${join(dir, WEIGHTS_FILE)} is shorter than its manifest says`);
    const values = new Float32Array(size);
    for (let i = 0; i < size; i++, offset += 4) values[i] = bytes.readFloatLE(offset);
    return { name: e.name, shape: e.shape, values };
  };
  const network = manifest.variables.map(take);
  const optimizer = manifest.optimizer.variables.map(take);
  if (offset !== bytes.length) throw new Error(`${join(dir, WEIGHTS_FILE)} is longer than its manifest says`);
  return { manifest, network, optimizer };
}

/** The network weights of a checkpoint, in layer order (kernel, bias per dense layer, output layer last). */
export async function readCheckpointWeights(dir: string): Promise<NamedWeights[]> {
  return (await readCheckpoint(dir)).network;
}

/**
 * Loads network and optimizer state from `dir` into a freshly built network and a fresh optimizer
 * (one that has taken no step yet). The checkpoint must belong to `trialId` and stand at `epoch`.
 */
export async function restoreCheckpoint(
  dir: string,
  expected: { trialId: number; epoch: number; optimizer: OptimizerName },
  variables: tf.Variable[],
  optimizer: tf.Optimizer,
): Promise<void> {
  const { manifest, network, optimizer: slots } = await readCheckpoint(dir);
  const where = join(dir, MANIFEST_FILE);
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
    tf.tidy(() => variable.assign(tf.tensor(stored.values, stored.shape)));
  });

  const powerNames = new Set(ADAM_POWERS.map(adamPowerName));
  const created: tf.Tensor[] = [tf.scalar(manifest.optimizer.iterations, 'int32')];
  const weights: NamedTensor[] = [{ name: 'iter', tensor: created[0]! }];
  for (const slot of slots) {
    if (powerNames.has(slot.name)) continue;
    const tensor = tf.tensor(slot.values, slot.shape);
    created.push(tensor);
    weights.push({ name: slot.name, tensor });
  }
  try {
    // setWeights wraps each tensor in a new variable sharing its data, so ours can be disposed after.
    await optimizer.setWeights(weights);
  } finally {
    tf.dispose(created);
  }
  const powers = optimizer as unknown as AdamPowers;
  for (const field of ADAM_POWERS) {
    const stored = slots.find((s) => s.name === adamPowerName(field));
    const variable = powers[field];
    if (stored && variable) tf.tidy(() => variable.assign(tf.scalar(stored.values[0]!)));
  }
}
