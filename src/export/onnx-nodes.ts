/** What `onnx.ts` and its helpers build a graph from, before protobuf encoding. */

/** One node of the graph (operator set 13, default domain). */
export interface NodeSpec {
  opType: string;
  input: string[];
  output: string[];
  attribute?: { name: string; type: number; f?: number; i?: number }[];
}

/** One float32 initializer. */
export interface TensorSpec {
  name: string;
  dims: number[];
  values: Float32Array;
}
