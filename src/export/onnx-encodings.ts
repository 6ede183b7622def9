/**
 * The numeric encodings (`numericEncoding`, src/data/numeric-encodings.ts) in the ONNX graph, after
 * the scaling: every input is copied to the network inputs it becomes by a MatMul with a 0/1 matrix
 * (raw inputs x network inputs), each copy goes through a x + b, and then either a clamp (Max, Min:
 * the piecewise-linear bins, whose ramp is (x - b_{t-1}) / (b_t - b_{t-1}) clamped to [0, 1], the
 * first bin open below and the last open above; inputs without encoding pass with a = 1, b = 0 and no
 * bound) or Sin or Cos (the periodic inputs, a = 2 pi c); 0/1 masks pick which of the three each
 * network input takes. No nodes when the recipe has no encoding.
 */
import type { FeatureRecipe, PreprocessingRecipe } from '../data/types.js';
import { categoricalWidth, rawInputCount } from '../data/recipe.js';
import { encodedWidth } from '../data/numeric-encodings.js';
import type { NodeSpec, TensorSpec } from './onnx-nodes.js';

/** One network input: the raw input it reads, its affine map, its clamp and which function it takes. */
interface EncodedInput {
  source: number;
  gain: number;
  offset: number;
  low: number;
  high: number;
  kind: 'ramp' | 'sin' | 'cos';
}

const pass = (source: number): EncodedInput => ({ source, gain: 1, offset: 0, low: -Infinity, high: Infinity, kind: 'ramp' });

/** The network inputs of one numeric recipe column read from raw input `source`. */
function numericInputs(feature: Extract<FeatureRecipe, { kind: 'numeric' }>, source: number): EncodedInput[] {
  const encoding = feature.encoding;
  if (encoding === undefined) return [pass(source)];
  if (encoding.kind === 'periodic') {
    return encoding.frequencies.flatMap((c): EncodedInput[] => [
      { source, gain: 2 * Math.PI * c, offset: 0, low: -Infinity, high: Infinity, kind: 'sin' },
      { source, gain: 2 * Math.PI * c, offset: 0, low: -Infinity, high: Infinity, kind: 'cos' },
    ]);
  }
  const { edges } = encoding;
  const bins = encodedWidth(encoding);
  if (edges.length < 2) return [{ source, gain: 0, offset: 0, low: -Infinity, high: Infinity, kind: 'ramp' }];
  return Array.from({ length: bins }, (_, t): EncodedInput => {
    const gain = 1 / (edges[t + 1]! - edges[t]!);
    return { source, gain, offset: -edges[t]! * gain, low: t > 0 ? 0 : -Infinity, high: t < bins - 1 ? 1 : Infinity, kind: 'ramp' };
  });
}

/** Every network input of the recipe, in the order the network reads them. */
function encodedInputs(recipe: PreprocessingRecipe): EncodedInput[] {
  const inputs: EncodedInput[] = [];
  let source = 0;
  for (const feature of recipe.features) {
    if (feature.kind === 'numeric') {
      inputs.push(...numericInputs(feature, source));
      source += 1;
    } else {
      for (let i = 0; i < categoricalWidth(feature); i++) inputs.push(pass(source++));
    }
  }
  return inputs;
}

/** Adds the numeric encodings to `x` (rows x raw inputs); returns the network input's name (`x` itself without encodings). */
export function encodingNodes(recipe: PreprocessingRecipe, x: string, nodes: NodeSpec[], tensors: TensorSpec[]): string {
  if (!recipe.features.some((feature) => feature.kind === 'numeric' && feature.encoding !== undefined)) return x;
  const inputs = encodedInputs(recipe);
  const raw = rawInputCount(recipe);
  const count = inputs.length;
  const spread = new Float32Array(raw * count);
  inputs.forEach((input, j) => (spread[input.source * count + j] = 1));
  const values = (pick: (input: EncodedInput) => number): Float32Array => Float32Array.from(inputs, pick);
  tensors.push(
    { name: 'encoding_spread', dims: [raw, count], values: spread },
    { name: 'encoding_gain', dims: [count], values: values((i) => i.gain) },
    { name: 'encoding_offset', dims: [count], values: values((i) => i.offset) },
    { name: 'encoding_low', dims: [count], values: values((i) => i.low) },
    { name: 'encoding_high', dims: [count], values: values((i) => i.high) },
    { name: 'encoding_ramp_mask', dims: [count], values: values((i) => (i.kind === 'ramp' ? 1 : 0)) },
    { name: 'encoding_sin_mask', dims: [count], values: values((i) => (i.kind === 'sin' ? 1 : 0)) },
    { name: 'encoding_cos_mask', dims: [count], values: values((i) => (i.kind === 'cos' ? 1 : 0)) },
  );
  nodes.push(
    { opType: 'MatMul', input: [x, 'encoding_spread'], output: ['encoding_copies'] },
    { opType: 'Mul', input: ['encoding_copies', 'encoding_gain'], output: ['encoding_scaled'] },
    { opType: 'Add', input: ['encoding_scaled', 'encoding_offset'], output: ['encoding_affine'] },
    { opType: 'Max', input: ['encoding_affine', 'encoding_low'], output: ['encoding_above'] },
    { opType: 'Min', input: ['encoding_above', 'encoding_high'], output: ['encoding_ramp'] },
    { opType: 'Sin', input: ['encoding_affine'], output: ['encoding_sin'] },
    { opType: 'Cos', input: ['encoding_affine'], output: ['encoding_cos'] },
    { opType: 'Mul', input: ['encoding_ramp', 'encoding_ramp_mask'], output: ['encoding_ramp_part'] },
    { opType: 'Mul', input: ['encoding_sin', 'encoding_sin_mask'], output: ['encoding_sin_part'] },
    { opType: 'Mul', input: ['encoding_cos', 'encoding_cos_mask'], output: ['encoding_cos_part'] },
    { opType: 'Add', input: ['encoding_ramp_part', 'encoding_sin_part'], output: ['encoding_two_parts'] },
    { opType: 'Add', input: ['encoding_two_parts', 'encoding_cos_part'], output: ['encoded'] },
  );
  return 'encoded';
}
