/**
 * The part of the ONNX model format (IR version 8) that an exported MLP uses, as protobuf
 * declarations for protobufjs. Message and field names and numbers are those of the ONNX
 * specification's `onnx.proto` (onnx/onnx, docs/IR.md); messages and fields rungwise never writes are
 * left out, which protobuf allows: a reader sees a complete, valid model. No npm package ships the
 * official `.proto` file, and the one package of generated code (onnx-proto) brings an old protobufjs.
 */
export const ONNX_SUBSET_PROTO = `
syntax = "proto2";
package onnx;

message AttributeProto {
  enum AttributeType { UNDEFINED = 0; FLOAT = 1; INT = 2; STRING = 3; TENSOR = 4; FLOATS = 6; INTS = 7; }
  optional string name = 1;
  optional float f = 2;
  optional int64 i = 3;
  optional bytes s = 4;
  optional TensorProto t = 5;
  repeated float floats = 7;
  repeated int64 ints = 8;
  optional AttributeType type = 20;
}

message ValueInfoProto {
  optional string name = 1;
  optional TypeProto type = 2;
  optional string doc_string = 3;
}

message NodeProto {
  repeated string input = 1;
  repeated string output = 2;
  optional string name = 3;
  optional string op_type = 4;
  repeated AttributeProto attribute = 5;
  optional string doc_string = 6;
  optional string domain = 7;
}

message StringStringEntryProto {
  optional string key = 1;
  optional string value = 2;
}

message OperatorSetIdProto {
  optional string domain = 1;
  optional int64 version = 2;
}

message ModelProto {
  optional int64 ir_version = 1;
  optional string producer_name = 2;
  optional string producer_version = 3;
  optional string domain = 4;
  optional int64 model_version = 5;
  optional string doc_string = 6;
  optional GraphProto graph = 7;
  repeated OperatorSetIdProto opset_import = 8;
  repeated StringStringEntryProto metadata_props = 14;
}

message GraphProto {
  repeated NodeProto node = 1;
  optional string name = 2;
  repeated TensorProto initializer = 5;
  optional string doc_string = 10;
  repeated ValueInfoProto input = 11;
  repeated ValueInfoProto output = 12;
}

message TensorProto {
  enum DataType { UNDEFINED = 0; FLOAT = 1; BOOL = 9; }
  repeated int64 dims = 1;
  optional int32 data_type = 2;
  repeated float float_data = 4 [packed = true];
  optional string name = 8;
  optional bytes raw_data = 9;
  optional string doc_string = 12;
}

message TensorShapeProto {
  message Dimension {
    oneof value {
      int64 dim_value = 1;
      string dim_param = 2;
    }
  }
  repeated Dimension dim = 1;
}

message TypeProto {
  message Tensor {
    optional int32 elem_type = 1;
    optional TensorShapeProto shape = 2;
  }
  oneof value {
    Tensor tensor_type = 1;
  }
}
`;

/** ONNX IR version and default-domain operator set the export targets (onnxruntime 1.x reads both). */
export const ONNX_IR_VERSION = 8;
export const ONNX_OPSET = 13;
/** The operator set of a model with LayerNormalization (residual blocks), which the default domain has from set 17 on. */
export const ONNX_OPSET_LAYER_NORMALIZATION = 17;
/** TensorProto.DataType.FLOAT. */
export const ONNX_FLOAT = 1;
/** The file `export --format onnx` writes beside the tfjs model. */
export const ONNX_FILE = 'model.onnx';
