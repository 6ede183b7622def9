/**
 * An engine trial's state in the checkpoint format the tfjs path writes (src/checkpoints/format.ts):
 * the same variable names, shapes and order, the same optimizer slots (`<name>/momentum`, or every
 * `<name>/m` then every `<name>/v` and Adam's running powers), so either path continues the other.
 */
import { CHECKPOINT_FORMAT_VERSION, decodeCheckpoint, encodeCheckpoint, type NamedWeights } from '../../checkpoints/format.js';
import { adamPowerName, checkCheckpoint } from '../../checkpoints/format.js';
import type { EngineTrial } from './trial.js';

interface Variable {
  name: string;
  shape: number[];
  /** Byte address and stride of the values, and the buffers of the optimizer slots. */
  at: number;
  stride: number;
  slots: [number, number];
}

/** Per dense layer: its normalisation's gain and bias when it reads one (residual blocks), then kernel and bias (the tfjs network's order). */
function variables(trial: EngineTrial): Variable[] {
  return trial.layers.flatMap((layer) => {
    const { prefix, norm } = layer.plan;
    const { at } = layer;
    const normalisation: Variable[] = norm
      ? [
          { name: `${norm.prefix}/gain`, shape: [layer.fanIn], at: at.normGain, stride: layer.inStride, slots: [at.normGainSlot1, at.normGainSlot2] },
          { name: `${norm.prefix}/bias`, shape: [layer.fanIn], at: at.normBias, stride: layer.inStride, slots: [at.normBiasSlot1, at.normBiasSlot2] },
        ]
      : [];
    return [
      ...normalisation,
      { name: `${prefix}/kernel`, shape: [layer.fanIn, layer.fanOut], at: at.kernel, stride: layer.outStride, slots: [at.kernelSlot1, at.kernelSlot2] },
      { name: `${prefix}/bias`, shape: [layer.fanOut], at: at.bias, stride: layer.outStride, slots: [at.biasSlot1, at.biasSlot2] },
    ] satisfies Variable[];
  });
}

const rowsOf = (shape: number[]): number => (shape.length === 2 ? shape[0]! : 1);
const columnsOf = (shape: number[]): number => shape.at(-1)!;

function slotNames(trial: EngineTrial, list: Variable[]): { name: string; variable: Variable; slot: 0 | 1 }[] {
  const optimizer = trial.spec.configuration.optimizer;
  if (optimizer === 'sgd') return [];
  if (optimizer === 'momentum') return list.map((variable) => ({ name: `${variable.name}/momentum`, variable, slot: 0 }));
  return [
    ...list.map((variable) => ({ name: `${variable.name}/m`, variable, slot: 0 as const })),
    ...list.map((variable) => ({ name: `${variable.name}/v`, variable, slot: 1 as const })),
  ];
}

/** The trial's network weights in layer order (kernel, bias per dense layer, output layer last). */
export function networkWeights(trial: EngineTrial): NamedWeights[] {
  return variables(trial).map((v) => ({ name: v.name, shape: v.shape, values: trial.readMatrix(v.at, v.stride, rowsOf(v.shape), columnsOf(v.shape)) }));
}

/** The optimizer's slot variables as tfjs's getWeights() lists them, Adam's running powers last. */
export function optimizerWeights(trial: EngineTrial): NamedWeights[] {
  const slots = slotNames(trial, variables(trial)).map(({ name, variable, slot }) => ({
    name,
    shape: variable.shape,
    values: trial.readMatrix(variable.slots[slot], variable.stride, rowsOf(variable.shape), columnsOf(variable.shape)),
  }));
  if (trial.spec.configuration.optimizer !== 'adam') return slots;
  const power = (name: 'power1' | 'power2'): Float32Array => Float32Array.of(trial.constant(name));
  return [...slots, { name: adamPowerName('accBeta1'), shape: [], values: power('power1') }, { name: adamPowerName('accBeta2'), shape: [], values: power('power2') }];
}

/** The trial's checkpoint at `epoch`, as bytes. */
export function trialCheckpoint(trial: EngineTrial, epoch: number): Uint8Array {
  const { trialId, configuration } = trial.spec;
  const network = networkWeights(trial);
  const slots = optimizerWeights(trial);
  const entry = ({ name, shape }: NamedWeights): { name: string; shape: number[] } => ({ name, shape });
  const manifest = {
    formatVersion: CHECKPOINT_FORMAT_VERSION,
    trialId,
    epoch,
    params: configuration,
    variables: network.map(entry),
    optimizer: { name: configuration.optimizer, iterations: trial.iterations, variables: slots.map(entry) },
  };
  return encodeCheckpoint(manifest, [...network, ...slots].map((w) => w.values));
}

/** Loads checkpoint bytes (of this trial at `epoch`) into a freshly created trial. */
export function restoreTrialCheckpoint(bytes: Uint8Array, trial: EngineTrial, epoch: number): void {
  const { manifest, network, optimizer } = decodeCheckpoint(bytes);
  const list = variables(trial);
  checkCheckpoint(manifest, network, { trialId: trial.spec.trialId, epoch, optimizer: trial.spec.configuration.optimizer }, list);
  list.forEach((v, i) => trial.writeMatrix(v.at, v.stride, network[i]!.values, columnsOf(v.shape)));
  const stored = new Map(optimizer.map((w) => [w.name, w]));
  for (const { name, variable, slot } of slotNames(trial, list)) {
    const weights = stored.get(name);
    // tfjs creates a slot at the first step; a checkpoint written before any step has none (zeros).
    if (weights) trial.writeMatrix(variable.slots[slot], variable.stride, weights.values, columnsOf(variable.shape));
  }
  if (trial.spec.configuration.optimizer === 'adam') {
    const power1 = stored.get(adamPowerName('accBeta1'));
    const power2 = stored.get(adamPowerName('accBeta2'));
    if (power1) trial.setConstant('power1', power1.values[0]!);
    if (power2) trial.setConstant('power2', power2.values[0]!);
  }
  trial.iterations = manifest.optimizer.iterations;
}
