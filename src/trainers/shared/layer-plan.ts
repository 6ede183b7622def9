/**
 * The dense layers of a trial's network as both trainers build them, in order: each layer's
 * variable names, fan-in and fan-out, initial-kernel rule, what follows it, and the layer
 * normalisation it reads. One list, so the engine's layout, the tfjs network, checkpoints and the
 * export agree on names, shapes and order.
 */
import type { Activation, TrialConfiguration } from '../../core/configuration.js';
import { denseShapes } from '../../core/size.js';
import { initRuleFor, layerPrefix, type InitRule } from './initial-weights.js';

/** Layer normalisation's epsilon (added to the variance). Common practice (no source): the paper (Ba, Kiros, Hinton, "Layer Normalization", 2016) fixes none; 1e-5 is the ONNX LayerNormalization default (from memory; onnxruntime-node runs the exported graph with the value written). */
export const NORM_EPSILON = 1e-5;

export interface DenseLayerPlan {
  /** Name prefix of its `kernel` and `bias`. */
  prefix: string;
  fanIn: number;
  fanOut: number;
  rule: InitRule;
  /** The configuration's activation follows this layer. */
  activated: boolean;
  /** A dropout mask follows this layer (after its activation when it has one), when the configuration has dropout. */
  masked: boolean;
  /**
   * Residual blocks only: the layer normalisation of the residual stream this layer reads (its
   * `gain` and `bias` under `prefix`), followed by the activation when `activated`.
   */
  norm?: { prefix: string; activated: boolean };
}

/** The fields of a configuration the layer plan depends on. */
export type NetworkShape = Pick<TrialConfiguration, 'depth' | 'width' | 'shape' | 'block'> & { activation: Activation };

/**
 * Plain: `depth` layers each followed by the activation and dropout, then the output layer.
 * Residual (Gorishniy et al., "Revisiting Deep Learning Models for Tabular Data", NeurIPS 2021,
 * section 3.2, from memory): a first layer to `width`; per block, norm, dense, activation, dropout, dense,
 * dropout, added to the block's input; then norm, activation and the output layer.
 */
export function layerPlan(trialId: number, network: NetworkShape, inputs: number, outputs: number): DenseLayerPlan[] {
  const shapes = denseShapes(network, inputs, outputs);
  const hiddenRule = initRuleFor(network.activation);
  if (network.block !== 'residual') {
    return shapes.map(({ fanIn, fanOut }, l) => {
      const hidden = l < network.depth;
      return { prefix: layerPrefix(trialId, l, network.depth), fanIn, fanOut, rule: hidden ? hiddenRule : 'glorotUniform', activated: hidden, masked: hidden };
    });
  }
  const last = shapes.length - 1;
  return shapes.map(({ fanIn, fanOut }, l): DenseLayerPlan => {
    if (l === 0) return { prefix: `t${trialId}/input`, fanIn, fanOut, rule: 'glorotUniform', activated: false, masked: false };
    if (l === last) return { prefix: `t${trialId}/output`, fanIn, fanOut, rule: 'glorotUniform', activated: false, masked: false, norm: { prefix: `t${trialId}/head/norm`, activated: true } };
    const block = Math.floor((l - 1) / 2);
    const first = (l - 1) % 2 === 0;
    const prefix = `t${trialId}/block${block}/${first ? 'dense1' : 'dense2'}`;
    if (!first) return { prefix, fanIn, fanOut, rule: 'glorotUniform', activated: false, masked: true };
    return { prefix, fanIn, fanOut, rule: hiddenRule, activated: true, masked: true, norm: { prefix: `t${trialId}/block${block}/norm`, activated: false } };
  });
}
