/**
 * What both trainers' checkpoints share and that needs no tfjs: Adam's running-power names and the
 * check that a checkpoint belongs to the trial, epoch and network it is loaded into. The engine's
 * threads import this, not `checkpoint.ts`, so they never load tfjs.
 */
import type { CheckpointManifest, NamedWeights } from '../checkpoints/format.js';
import type { OptimizerName } from '../study/definition.js';

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
