/**
 * `export --format onnx`: the exported network as `model.onnx` (ONNX IR 8, operator set 13; 17 when it
 * holds residual blocks, for LayerNormalization), with the
 * numeric preprocessing folded in as its first nodes: a missing value (NaN) becomes the training mean
 * (IsNaN, Where), then (x - mean) / std (Sub, Div). Categorical columns cannot be folded (ONNX tensors
 * of one type per input, and a category map is not an operator of the default domain), so they come
 * in one-hot encoded, as `configuration.json` and the model's metadata describe.
 */
import type * as tf from '@tensorflow/tfjs';
import { writeFile } from 'node:fs/promises';
import path from 'node:path';
import protobuf from 'protobufjs';
import type { PreprocessingRecipe } from '../data/types.js';
import type { ExportConfiguration, OnnxDescription } from './configuration.js';
import { outputCount, rawInputNames } from './model-files.js';
import { categoricalWidth, rawInputCount } from '../data/recipe.js';
import { POOLED_INPUT } from '../data/input-checks.js';
import { SMOOTH_CLIP } from '../data/numeric-inputs.js';
import { quantileNodes } from './onnx-quantiles.js';
import { encodingNodes } from './onnx-encodings.js';
import type { NodeSpec, TensorSpec } from './onnx-nodes.js';
import { ONNX_FILE, ONNX_FLOAT, ONNX_IR_VERSION, ONNX_OPSET, ONNX_OPSET_LAYER_NORMALIZATION, ONNX_SUBSET_PROTO } from './onnx-schema.js';

export { ONNX_FILE } from './onnx-schema.js';
export const ONNX_INPUT = 'features';
export const ONNX_OUTPUT = 'output';

const ATTRIBUTE_FLOAT = 1;
const ATTRIBUTE_INT = 2;

let modelType: protobuf.Type | undefined;
function onnxModelType(): protobuf.Type {
  modelType ??= protobuf.parse(ONNX_SUBSET_PROTO).root.lookupType('onnx.ModelProto');
  return modelType;
}

function littleEndian(values: Float32Array): Uint8Array {
  const bytes = new Uint8Array(values.length * 4);
  const view = new DataView(bytes.buffer);
  values.forEach((value, i) => view.setFloat32(i * 4, value, true));
  return bytes;
}

/** The nodes that apply a dense layer's activation to `x`, named after `prefix`; returns the output name. */
function activationNodes(activation: string, x: string, prefix: string, nodes: NodeSpec[], tensors: TensorSpec[], leakySlope?: number): string {
  const out = `${prefix}_act`;
  const unary = (opType: string, attribute?: NodeSpec['attribute']): string => {
    nodes.push({ opType, input: [x], output: [out], ...(attribute ? { attribute } : {}) });
    return out;
  };
  switch (activation) {
    case 'linear':
      return x;
    case 'relu':
      return unary('Relu');
    case 'tanh':
      return unary('Tanh');
    case 'sigmoid':
      return unary('Sigmoid');
    case 'softplus':
      return unary('Softplus');
    case 'elu':
      return unary('Elu', [{ name: 'alpha', type: ATTRIBUTE_FLOAT, f: 1 }]);
    // tfjs's selu constants are the ONNX defaults (Klambauer et al., 2017).
    case 'selu':
      return unary('Selu');
    case 'softmax':
      return unary('Softmax', [{ name: 'axis', type: ATTRIBUTE_INT, i: -1 }]);
    case 'leakyRelu':
      return unary('LeakyRelu', [{ name: 'alpha', type: ATTRIBUTE_FLOAT, f: leakySlope ?? 0.2 }]);
    case 'swish': {
      nodes.push({ opType: 'Sigmoid', input: [x], output: [`${prefix}_sigmoid`] });
      nodes.push({ opType: 'Mul', input: [x, `${prefix}_sigmoid`], output: [out] });
      return out;
    }
    case 'relu6': {
      tensors.push({ name: `${prefix}_zero`, dims: [], values: Float32Array.of(0) }, { name: `${prefix}_six`, dims: [], values: Float32Array.of(6) });
      nodes.push({ opType: 'Clip', input: [x, `${prefix}_zero`, `${prefix}_six`], output: [out] });
      return out;
    }
    default:
      throw new Error(`activation '${activation}' has no ONNX form in rungwise's export`);
  }
}

/** The value name a layer reads: its inbound layer's output, or the graph's scaled input for the first layer. */
function inboundNames(layer: tf.layers.Layer, outputs: ReadonlyMap<string, string>, input: string): string[] {
  const inbound = layer.inboundNodes[0]?.inboundLayers ?? [];
  const names = inbound.map((source) => outputs.get(source.name) ?? input);
  return names.length > 0 ? names : [input];
}

/** The nodes of one layer (Dense, an activation, LayerNormalization, Add) reading `inputs`; returns its output name. */
function nodesOfLayer(layer: tf.layers.Layer, inputs: string[], nodes: NodeSpec[], tensors: TensorSpec[]): string {
  const name = layer.name;
  const config = layer.getConfig() as { alpha?: number; activation?: string; epsilon?: number };
  const x = inputs[0]!;
  switch (layer.getClassName()) {
    case 'LeakyReLU':
      return activationNodes('leakyRelu', x, name, nodes, tensors, Number(config.alpha));
    case 'Activation':
      return activationNodes(String(config.activation ?? 'linear'), x, name, nodes, tensors);
    case 'Add':
      nodes.push({ opType: 'Add', input: inputs, output: [`${name}_sum`] });
      return `${name}_sum`;
    case 'LayerNormalization': {
      // Operator set 17: Y = (X - mean) / sqrt(variance + epsilon) * Scale + B over the last axis.
      const [gain, bias] = layer.getWeights();
      tensors.push({ name: `${name}_gain`, dims: gain!.shape, values: Float32Array.from(gain!.dataSync()) });
      tensors.push({ name: `${name}_bias`, dims: bias!.shape, values: Float32Array.from(bias!.dataSync()) });
      const attribute = [{ name: 'axis', type: ATTRIBUTE_INT, i: -1 }, { name: 'epsilon', type: ATTRIBUTE_FLOAT, f: Number(config.epsilon) }];
      nodes.push({ opType: 'LayerNormalization', input: [x, `${name}_gain`, `${name}_bias`], output: [`${name}_norm`], attribute });
      return `${name}_norm`;
    }
    case 'Dense': {
      const [kernel, bias] = layer.getWeights();
      tensors.push({ name: `${name}_kernel`, dims: kernel!.shape, values: Float32Array.from(kernel!.dataSync()) });
      tensors.push({ name: `${name}_bias`, dims: bias!.shape, values: Float32Array.from(bias!.dataSync()) });
      nodes.push({ opType: 'Gemm', input: [x, `${name}_kernel`, `${name}_bias`], output: [`${name}_dense`] });
      return activationNodes(String(config.activation ?? 'linear'), `${name}_dense`, name, nodes, tensors);
    }
    default:
      throw new Error(`layer ${name} (${layer.getClassName()}) has no ONNX form in rungwise's export`);
  }
}

/** The nodes of every layer in the model's order (a plain stack, or a functional graph of residual blocks); returns the last output's name. */
function layerNodes(network: tf.LayersModel, input: string, nodes: NodeSpec[], tensors: TensorSpec[]): string {
  const outputs = new Map<string, string>();
  let last = input;
  for (const layer of network.layers) {
    if (layer.getClassName() === 'InputLayer') {
      outputs.set(layer.name, input);
      continue;
    }
    last = nodesOfLayer(layer, inboundNames(layer, outputs, input), nodes, tensors);
    outputs.set(layer.name, last);
  }
  return last;
}

/**
 * Per network input: the fill for a missing value, then (x - shift) / divisor. Numeric inputs take the
 * training mean as fill, one-hot inputs their column's fill category; a standardised one its mean and std, a robust one its median and scale
 * (Infinity for a constant column, so it is 0), a quantile one Infinity (0 here: the interpolation adds
 * its value). One-hot inputs pass unchanged.
 */
function inputScaling(recipe: PreprocessingRecipe): { fill: Float32Array; mean: Float32Array; std: Float32Array } {
  const fill: number[] = [];
  const mean: number[] = [];
  const std: number[] = [];
  for (const feature of recipe.features) {
    if (feature.kind === 'numeric') {
      const transform = feature.transform;
      fill.push(feature.mean);
      mean.push(transform === undefined ? feature.mean : transform.kind === 'robust-clip' ? transform.centre : 0);
      std.push(transform === undefined ? feature.std : transform.kind === 'robust-clip' && transform.scale > 0 ? transform.scale : Number.POSITIVE_INFINITY);
    } else {
      // NaN in a categorical column's inputs means missing: its fill category's one-hot (the pooled input when the fill is pooled).
      const fillAt = feature.categories.includes(feature.fill) ? feature.categories.indexOf(feature.fill) : feature.pooled ? feature.categories.length : -1;
      for (let i = 0; i < categoricalWidth(feature); i++) {
        fill.push(i === fillAt ? 1 : 0);
        mean.push(0);
        std.push(1);
      }
    }
  }
  return { fill: Float32Array.from(fill), mean: Float32Array.from(mean), std: Float32Array.from(std) };
}

/** The network input's values after preprocessing, from `features` (raw numbers, NaN where missing, and one-hot categories). */
function preprocessingNodes(recipe: PreprocessingRecipe, nodes: NodeSpec[], tensors: TensorSpec[]): string {
  const scaling = inputScaling(recipe);
  const raw = rawInputCount(recipe);
  tensors.push({ name: 'fill', dims: [raw], values: scaling.fill }, { name: 'mean', dims: [raw], values: scaling.mean }, { name: 'std', dims: [raw], values: scaling.std });
  nodes.push(
    { opType: 'IsNaN', input: [ONNX_INPUT], output: ['missing'] },
    { opType: 'Where', input: ['missing', 'fill', ONNX_INPUT], output: ['filled'] },
    { opType: 'Sub', input: ['filled', 'mean'], output: ['centred'] },
    { opType: 'Div', input: ['centred', 'std'], output: ['scaled'] },
  );
  const clipped = smoothClipNodes(recipe, 'scaled', nodes, tensors);
  return encodingNodes(recipe, quantileNodes(recipe, clipped, nodes, tensors), nodes, tensors);
}

/** The smooth clip z / sqrt(1 + (g z)^2) with g = 1/3 on robust inputs and 0 elsewhere (identity); no nodes without robust inputs. */
function smoothClipNodes(recipe: PreprocessingRecipe, x: string, nodes: NodeSpec[], tensors: TensorSpec[]): string {
  const gain: number[] = [];
  for (const feature of recipe.features) {
    if (feature.kind === 'numeric') gain.push(feature.transform?.kind === 'robust-clip' ? 1 / SMOOTH_CLIP : 0);
    else for (let i = 0; i < categoricalWidth(feature); i++) gain.push(0);
  }
  if (gain.every((g) => g === 0)) return x;
  tensors.push({ name: 'clip_gain', dims: [rawInputCount(recipe)], values: Float32Array.from(gain) }, { name: 'clip_one', dims: [], values: Float32Array.of(1) });
  nodes.push(
    { opType: 'Mul', input: [x, 'clip_gain'], output: ['clip_scaled'] },
    { opType: 'Mul', input: ['clip_scaled', 'clip_scaled'], output: ['clip_square'] },
    { opType: 'Add', input: ['clip_square', 'clip_one'], output: ['clip_sum'] },
    { opType: 'Sqrt', input: ['clip_sum'], output: ['clip_root'] },
    { opType: 'Div', input: [x, 'clip_root'], output: ['clipped'] },
  );
  return 'clipped';
}

/** The ONNX model (protobuf bytes) computing what the tfjs Layers `network` computes, from raw numeric inputs. */
export function onnxModelBytes(network: tf.LayersModel, configuration: ExportConfiguration, producerVersion: string): Uint8Array {
  const { recipe } = configuration;
  const nodes: NodeSpec[] = [];
  const tensors: TensorSpec[] = [];
  const x = layerNodes(network, preprocessingNodes(recipe, nodes, tensors), nodes, tensors);
  // The graph's output must be a node's output under its published name.
  nodes.push({ opType: 'Identity', input: [x], output: [ONNX_OUTPUT] });

  const tensorType = (columns: number) => ({ tensorType: { elemType: ONNX_FLOAT, shape: { dim: [{ dimParam: 'rows' }, { dimValue: columns }] } } });
  const description = describeOnnx(configuration);
  const ModelProto = onnxModelType();
  const message = ModelProto.fromObject({
    irVersion: ONNX_IR_VERSION,
    opsetImport: [{ domain: '', version: nodes.some((node) => node.opType === 'LayerNormalization') ? ONNX_OPSET_LAYER_NORMALIZATION : ONNX_OPSET }],
    producerName: 'rungwise',
    producerVersion,
    docString: `${description.numeric} ${description.categorical} Output: ${description.outputMeaning}`,
    graph: {
      name: `${configuration.study}_trial_${configuration.trialId}`,
      node: nodes.map((node, i) => ({ ...node, name: `n${i}_${node.opType.toLowerCase()}` })),
      initializer: tensors.map((t) => ({ name: t.name, dims: t.dims, dataType: ONNX_FLOAT, rawData: littleEndian(t.values) })),
      input: [{ name: ONNX_INPUT, type: tensorType(rawInputCount(recipe)), docString: description.inputs.join(', ') }],
      output: [{ name: ONNX_OUTPUT, type: tensorType(outputCount(recipe)), docString: description.outputMeaning }],
    },
    metadataProps: [
      { key: 'rungwise.inputs', value: JSON.stringify(description.inputs) },
      { key: 'rungwise.configuration', value: JSON.stringify({ study: configuration.study, trialId: configuration.trialId, outputs: configuration.outputs }) },
    ],
  });
  return ModelProto.encode(message).finish();
}

/** What `configuration.json` says about `model.onnx`. */
export function describeOnnx(configuration: ExportConfiguration): OnnxDescription {
  return {
    file: ONNX_FILE,
    input: ONNX_INPUT,
    output: ONNX_OUTPUT,
    inputs: rawInputNames(configuration.recipe),
    numeric: numericDescription(configuration.recipe),
    categorical: `Categorical columns go in one-hot, one input per \`column=category\` of \`inputs\` (1 for the row's category, else 0): ${
      configuration.recipe.features.some((feature) => feature.kind === 'categorical' && feature.pooled)
        ? `a column with a \`column=${POOLED_INPUT}\` input takes its rare categories and categories unseen in training there; elsewhere all zeros for a category unseen in training`
        : 'all zeros for a category unseen in training'
    }; for a missing value, the recipe's \`fill\` category, or NaN in each of the column's inputs (the graph then takes the \`fill\` category).`,
    outputMeaning: configuration.outputs.meaning,
  };
}

/** How the graph treats numeric columns, by the transforms the recipe uses. */
function numericDescription(recipe: PreprocessingRecipe): string {
  const kinds = new Set(recipe.features.map((feature) => (feature.kind === 'numeric' ? (feature.transform?.kind ?? 'standardise') : undefined)));
  const ways: string[] = [];
  if (!kinds.has('robust-clip') && !kinds.has('normal-quantiles')) kinds.add('standardise');
  if (kinds.has('standardise')) ways.push('standardises with the training mean and standard deviation');
  if (kinds.has('robust-clip')) ways.push(`subtracts the training median, divides by the interquartile range and clips smoothly, z / sqrt(1 + (z / ${SMOOTH_CLIP})^2) (\`transform.kind\` 'robust-clip')`);
  if (kinds.has('normal-quantiles')) ways.push("maps the value onto the standard normal by piecewise-linear interpolation between the recipe's training quantiles (`knots`) and their normal scores (`scores`), as clamped segments summed by two 0/1 MatMuls (`transform.kind` 'normal-quantiles')");
  const nonFinite = ways.length > 1 || !kinds.has('standardise') ? ' (pass non-finite values as NaN)' : '';
  return `Numeric columns go in as they are in the CSV, NaN where missing${nonFinite}: the graph fills a missing value with the training mean and ${ways.join('; or ') || 'passes it on'}.${encodingDescription(recipe)}`;
}

/** What the graph does after the scaling when the recipe encodes numeric inputs; '' otherwise. */
function encodingDescription(recipe: PreprocessingRecipe): string {
  const kinds = new Set(recipe.features.map((feature) => (feature.kind === 'numeric' ? feature.encoding?.kind : undefined)));
  if (kinds.has('piecewise-linear')) return " Then each scaled value becomes one network input per bin of the recipe's `encoding.edges`: 0 below the bin, 1 above it, the linear ramp inside (the first bin open below, the last open above; `encoding.kind` 'piecewise-linear').";
  if (kinds.has('periodic')) return " Then each scaled value x becomes sin(2 pi c x) and cos(2 pi c x) for each of the recipe's fixed `encoding.frequencies` c (`encoding.kind` 'periodic').";
  return '';
}

/** Writes `model.onnx` for `network` into `dir`. */
export async function writeOnnxModel(network: tf.LayersModel, configuration: ExportConfiguration, dir: string, producerVersion: string): Promise<void> {
  await writeFile(path.join(dir, ONNX_FILE), onnxModelBytes(network, configuration, producerVersion));
}
