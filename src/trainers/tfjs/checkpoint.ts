/** Checkpoints of tfjs networks and optimizers, in the byte format of `checkpoints/format.ts`. */
import * as tf from '@tensorflow/tfjs';
import {
  CHECKPOINT_FORMAT_VERSION,
  decodeCheckpoint,
  encodeCheckpoint,
  type CheckpointManifest,
  type NamedWeights,
  type VariableEntry,
} from '../../checkpoints/format.js';
import type { OptimizerName, TrialConfiguration } from '../../study/definition.js';

export { checkpointWeights, decodeCheckpoint, type NamedWeights } from '../../checkpoints/format.js';

/**
 * tfjs 4.22's Adam keeps the running products beta1^t and beta2^t in these private variables.
 * Its setWeights() recomputes them as pow(beta, iterations + 1), which can differ in the last
 * float32 bits from the running product; saving them keeps a resumed trial bit-exact.
 */
const ADAM_POWERS = ['accBeta1', 'accBeta2'] as const;
/** The checkpoint name of Adam's running power of beta1 ('accBeta1') or beta2 ('accBeta2'). */
export const adamPowerName = (field: (typeof ADAM_POWERS)[number]): string => `adam/${field}`;

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

/** The checkpoint of a network and its optimizer after `info.epoch` epochs, as bytes. */
export async function checkpointBytes(
  info: { trialId: number; epoch: number; params: TrialConfiguration },
  variables: tf.Variable[],
  optimizer: tf.Optimizer,
): Promise<Uint8Array> {
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
    return encodeCheckpoint(manifest, [...network, ...slots].map((e) => e.tensor.dataSync() as Float32Array));
  } finally {
    tf.dispose(state.owned);
  }
}

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

/**
 * Loads network and optimizer state from checkpoint bytes into a freshly built network and a fresh optimizer
 * (one that has taken no step yet). The checkpoint must belong to `trialId` and stand at `epoch`.
 */
export async function restoreCheckpoint(
  bytes: Uint8Array,
  expected: { trialId: number; epoch: number; optimizer: OptimizerName },
  variables: tf.Variable[],
  optimizer: tf.Optimizer,
): Promise<void> {
  const { manifest, network, optimizer: slots } = decodeCheckpoint(bytes);
  checkCheckpoint(manifest, network, expected, variables);
  variables.forEach((variable, i) => tf.tidy(() => variable.assign(tf.tensor(network[i]!.values, network[i]!.shape))));

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
