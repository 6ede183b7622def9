/**
 * An exported ensemble as one `model.onnx`: each member's graph, as the single-network writer
 * (`onnx.ts`) builds it, with its node, value and initializer names prefixed `m<i>_` (the input
 * `features` stays shared), then `Mul` by each member's count, one `Sum` and a `Div` by the total
 * count: the weighted mean `predict` computes.
 */
import type * as tf from '@tensorflow/tfjs';
import { writeFile } from 'node:fs/promises';
import path from 'node:path';
import protobuf from 'protobufjs';
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

/** The ONNX model (protobuf bytes) of the ensemble: every member's layers and their weighted mean. */
export function ensembleOnnxBytes(members: readonly { network: tf.LayersModel; count: number }[], configuration: ExportConfiguration, producerVersion: string): Uint8Array {
  if (members.length === 0) throw new Error('an ensemble needs at least one member');
  const models = members.map(({ network }) => decode(onnxModelBytes(network, configuration, producerVersion)));
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
export async function writeEnsembleOnnx(members: readonly { network: tf.LayersModel; count: number }[], configuration: ExportConfiguration, dir: string, producerVersion: string): Promise<void> {
  await writeFile(path.join(dir, ONNX_FILE), ensembleOnnxBytes(members, configuration, producerVersion));
}
