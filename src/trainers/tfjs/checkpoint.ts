/** Checkpoints of tfjs networks and optimizers, in the byte format of `checkpoints/format.ts`. */
import * as tf from '@tensorflow/tfjs';
import {
  ADAM_POWERS,
  adamPowerName,
  checkCheckpoint,
  CHECKPOINT_FORMAT_VERSION,
  decodeCheckpoint,
  encodeCheckpoint,
  type CheckpointManifest,
  type NamedWeights,
  type VariableEntry,
} from '../../checkpoints/format.js';
import type { OptimizerName, TrialConfiguration } from '../../core/configuration.js';

export { checkpointWeights, decodeCheckpoint, type NamedWeights } from '../../checkpoints/format.js';


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
  info: { trialId: number; epoch: number; configuration: TrialConfiguration },
  variables: tf.Variable[],
  optimizer: tf.Optimizer,
): Promise<Uint8Array> {
  const state = await optimizerState(optimizer);
  try {
    const network = variables.map(entry);
    const slots = state.tensors.map(entry);
    const manifest: CheckpointManifest = {
      formatVersion: CHECKPOINT_FORMAT_VERSION,
      trialId: info.trialId,
      epoch: info.epoch,
      params: info.configuration,
      variables: network.map(({ name, shape }) => ({ name, shape })),
      optimizer: { name: info.configuration.optimizer, iterations: state.iterations, variables: slots.map(({ name, shape }) => ({ name, shape })) },
    };
    return encodeCheckpoint(manifest, [...network, ...slots].map((e) => e.tensor.dataSync() as Float32Array));
  } finally {
    tf.dispose(state.owned);
  }
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
