/**
 * An exported ensemble as one `model.onnx`: each member's graph, as the single-network writer
 * (`onnx.ts`) builds it, with its node, value and initializer names prefixed `m<i>_` (the input
 * `features` stays shared), then `Mul` by each member's count, one `Sum` and a `Div` by the total
 * count: the weighted mean `predict` computes. A fold network brings its own recipe, so its graph
 * folds in its own numeric preprocessing; its categorical inputs must be laid out as the export's.
 */
import type * as tf from '@tensorflow/tfjs';
import { writeFile } from 'node:fs/promises';
import path from 'node:path';
import protobuf from 'protobufjs';
import { isDeepStrictEqual } from 'node:util';
import type { PreprocessingRecipe } from '../data/types.js';
import type { ExportConfiguration } from './configuration.js';
import { ONNX_INPUT, ONNX_OUTPUT, onnxModelBytes } from './onnx.js';
import { ONNX_FILE, ONNX_FLOAT, ONNX_SUBSET_PROTO } from './onnx-schema.js';

interface NodeObject {
  input?: string[];
  output?: string[];
  name?: string;
  [field: string]: unknown;
}

interface GraphObject {
  name?: string;
  node?: NodeObject[];
  initializer?: { name?: string; [field: string]: unknown }[];
  input?: unknown[];
  output?: { name?: string; [field: string]: unknown }[];
  [field: string]: unknown;
}

interface ModelObject {
  graph?: GraphObject;
  [field: string]: unknown;
}

let modelType: protobuf.Type | undefined;
function onnxModelType(): protobuf.Type {
  modelType ??= protobuf.parse(ONNX_SUBSET_PROTO).root.lookupType('onnx.ModelProto');
  return modelType;
}

const decode = (bytes: Uint8Array): ModelObject => onnxModelType().toObject(onnxModelType().decode(bytes), { longs: Number, defaults: false }) as ModelObject;

/** A member graph's nodes and initializers under the prefix `m<i>_`; its output becomes `m<i>_output`. */
function prefixedMember(graph: GraphObject, prefix: string): Pick<GraphObject, 'node' | 'initializer'> {
  const rename = (name: string): string => (name === ONNX_INPUT ? name : `${prefix}${name}`);
  return {
    node: (graph.node ?? []).map((node) => ({ ...node, name: rename(node.name ?? 'node'), input: (node.input ?? []).map(rename), output: (node.output ?? []).map(rename) })),
    initializer: (graph.initializer ?? []).map((tensor) => ({ ...tensor, name: rename(tensor.name ?? '') })),
  };
}

function scalar(name: string, value: number): Record<string, unknown> {
  const bytes = new Uint8Array(4);
  new DataView(bytes.buffer).setFloat32(0, value, true);
  return { name, dims: [], dataType: ONNX_FLOAT, rawData: bytes };
}

/** One member of the ONNX ensemble: its network, its count in the mean, and a fold network's own recipe. */
export interface OnnxMember {
  network: tf.LayersModel;
  count: number;
  recipe?: PreprocessingRecipe;
}

/**
 * The first column a member's recipe lays out otherwise than the export's (column order, kind, a
 * categorical column's categories or pooled ones), or undefined when they agree: only then can one
 * `features` input feed both graphs. The fill of a missing category may differ: NaN in the column's
 * inputs lets each graph take its own.
 */
export function columnLaidOutOtherwise(recipe: PreprocessingRecipe, member: PreprocessingRecipe): string | undefined {
  for (let i = 0; i < Math.max(recipe.features.length, member.features.length); i++) {
    const own = recipe.features[i];
    const other = member.features[i];
    if (!own || !other || own.name !== other.name || own.kind !== other.kind) return (own ?? other)!.name;
    if (own.kind === 'categorical' && other.kind === 'categorical' && !isDeepStrictEqual([own.categories, own.pooled], [other.categories, other.pooled])) return own.name;
  }
  return undefined;
}

/** The ONNX model (protobuf bytes) of the ensemble: every member's layers and their weighted mean. */
export function ensembleOnnxBytes(members: readonly OnnxMember[], configuration: ExportConfiguration, producerVersion: string): Uint8Array {
  if (members.length === 0) throw new Error('an ensemble needs at least one member');
  const models = members.map(({ network, recipe }) => decode(onnxModelBytes(network, recipe ? { ...configuration, recipe } : configuration, producerVersion)));
  const first = models[0]!;
  const nodes: NodeObject[] = [];
  const initializers: Record<string, unknown>[] = [];
  const weighted: string[] = [];
  models.forEach((model, i) => {
    const prefix = `m${i + 1}_`;
    const member = prefixedMember(model.graph ?? {}, prefix);
    nodes.push(...member.node!);
    initializers.push(...member.initializer!, scalar(`${prefix}count`, members[i]!.count));
    nodes.push({ opType: 'Mul', input: [`${prefix}${ONNX_OUTPUT}`, `${prefix}count`], output: [`${prefix}weighted`], name: `${prefix}weighted_mul` });
    weighted.push(`${prefix}weighted`);
  });
  const total = members.reduce((sum, member) => sum + member.count, 0);
  initializers.push(scalar('total_count', total));
  nodes.push({ opType: 'Sum', input: weighted, output: ['weighted_sum'], name: 'ensemble_sum' });
  nodes.push({ opType: 'Div', input: ['weighted_sum', 'total_count'], output: [ONNX_OUTPUT], name: 'ensemble_mean' });
  const graph: GraphObject = {
    ...first.graph,
    name: `${configuration.study}_ensemble_${members.length}`,
    node: nodes,
    initializer: initializers as GraphObject['initializer'],
  };
  const ModelProto = onnxModelType();
  return ModelProto.encode(ModelProto.fromObject({ ...first, graph })).finish();
}

/** Writes the ensemble's `model.onnx` into `dir`. */
export async function writeEnsembleOnnx(members: readonly OnnxMember[], configuration: ExportConfiguration, dir: string, producerVersion: string): Promise<void> {
  await writeFile(path.join(dir, ONNX_FILE), ensembleOnnxBytes(members, configuration, producerVersion));
}
