/**
 * A data set as one Redis value: `RWDS`, the header's length (uint32 LE), the header (UTF-8 JSON),
 * zero padding to a multiple of 4, the four matrices as float32 LE (train x, train y, validation x,
 * validation y), then the SHA-256 of everything before it. A value that is cut short, altered or of
 * another protocol is refused with a {@link DatasetMessageError}; nothing is trained on it.
 */
import { createHash } from 'node:crypto';
import { QUEUE_PROTOCOL_VERSION, protocolMismatch } from './protocol.js';
import type { SharedDataset } from '../../core/job.js';

const MAGIC = 'RWDS';
const CHECKSUM_BYTES = 32;

interface DatasetHeader {
  protocol: number;
  id: string;
  task: SharedDataset['task'];
  inputCount: number;
  outputCount: number;
  targetScaling?: { mean: number; std: number };
  classWeights?: number[];
  costMatrix?: number[][];
  /** Rows and element counts of x and y, training split then validation split. */
  splits: { rows: number; x: number; y: number }[];
}

export class DatasetMessageError extends Error {
  constructor(id: string, reason: string) {
    super(`data set ${id} from Redis refused: ${reason}`);
    this.name = 'DatasetMessageError';
  }
}

export function encodeDataset(dataset: SharedDataset): Buffer {
  const arrays = [dataset.train.x, dataset.train.y, dataset.validation.x, dataset.validation.y];
  const header: DatasetHeader = {
    protocol: QUEUE_PROTOCOL_VERSION,
    id: dataset.id,
    task: dataset.task,
    inputCount: dataset.inputCount,
    outputCount: dataset.outputCount,
    ...(dataset.targetScaling ? { targetScaling: dataset.targetScaling } : {}),
    ...(dataset.classWeights ? { classWeights: dataset.classWeights } : {}),
    ...(dataset.costMatrix ? { costMatrix: dataset.costMatrix } : {}),
    splits: [dataset.train, dataset.validation].map((s) => ({ rows: s.rows, x: s.x.length, y: s.y.length })),
  };
  const json = Buffer.from(JSON.stringify(header), 'utf8');
  const valuesStart = 8 + json.length + ((4 - (json.length % 4)) % 4);
  const body = Buffer.alloc(valuesStart + arrays.reduce((sum, a) => sum + a.length * 4, 0));
  body.write(MAGIC, 0, 'ascii');
  body.writeUInt32LE(json.length, 4);
  json.copy(body, 8);
  let offset = valuesStart;
  for (const array of arrays) {
    for (let i = 0; i < array.length; i++, offset += 4) body.writeFloatLE(array[i]!, offset);
  }
  return Buffer.concat([body, createHash('sha256').update(body).digest()]);
}

/** Decode and check a data-set value; `expectedId` is the id the job named. Matrices land in shared memory. */
export function decodeDataset(bytes: Buffer, expectedId: string): SharedDataset {
  const refuse = (reason: string): never => {
    throw new DatasetMessageError(expectedId, reason);
  };
  if (bytes.length < 8 + CHECKSUM_BYTES) refuse(`${bytes.length} bytes is too short to be a data set`);
  const body = bytes.subarray(0, bytes.length - CHECKSUM_BYTES);
  const checksum = createHash('sha256').update(body).digest();
  if (!checksum.equals(bytes.subarray(bytes.length - CHECKSUM_BYTES))) refuse('checksum does not match (cut short or altered in transit)');
  if (body.toString('ascii', 0, 4) !== MAGIC) refuse('not a rungwise data set');
  const jsonLength = body.readUInt32LE(4);
  if (8 + jsonLength > body.length) refuse('header is longer than the message');
  const header = JSON.parse(body.toString('utf8', 8, 8 + jsonLength)) as DatasetHeader;
  const mismatch = protocolMismatch(header.protocol, 'the data set');
  if (mismatch) refuse(mismatch);
  if (header.id !== expectedId) refuse(`it holds data set ${header.id}`);
  const valuesStart = 8 + jsonLength + ((4 - (jsonLength % 4)) % 4);
  const floats = header.splits.reduce((sum, s) => sum + s.x + s.y, 0);
  if (valuesStart + floats * 4 !== body.length) refuse(`${body.length - valuesStart} bytes of values, the header says ${floats * 4}`);
  let offset = valuesStart;
  const take = (count: number): Float32Array => {
    const array = new Float32Array(new SharedArrayBuffer(count * 4));
    for (let i = 0; i < count; i++, offset += 4) array[i] = body.readFloatLE(offset);
    return array;
  };
  const [train, validation] = header.splits.map((s) => ({ rows: s.rows, x: take(s.x), y: take(s.y) }));
  return {
    id: header.id,
    task: header.task,
    inputCount: header.inputCount,
    outputCount: header.outputCount,
    train: train!,
    validation: validation!,
    ...(header.targetScaling ? { targetScaling: header.targetScaling } : {}),
    ...(header.classWeights ? { classWeights: header.classWeights } : {}),
    ...(header.costMatrix ? { costMatrix: header.costMatrix } : {}),
  };
}
