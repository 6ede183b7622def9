/**
 * A data set as one Redis value: `RWDS`, the header's length (uint32 LE), the header (UTF-8 JSON),
 * zero padding to a multiple of 4, the four matrices as float32 LE (train x, train y, validation x,
 * validation y), then the SHA-256 of everything before it. A value that is cut short, altered or of
 * another protocol is refused with a {@link DatasetMessageError}; nothing is trained on it.
 */
import { createHash } from 'node:crypto';
import { datasetHeaderSchema, readEntry, type DatasetHeader } from './messages.js';
import { QUEUE_PROTOCOL_VERSION, protocolMismatch } from './protocol.js';
import type { SharedDataset } from '../../core/job.js';

const MAGIC = 'RWDS';
const CHECKSUM_BYTES = 32;

/** The hex SHA-256 a data-set message ends with: what a job names as its `datasetSha256`. */
export function datasetChecksum(bytes: Buffer): string {
  return bytes.subarray(bytes.length - CHECKSUM_BYTES).toString('hex');
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
    splits: [sizes(dataset.train), sizes(dataset.validation)],
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

/**
 * Decode and check a data-set value; `expectedId` is the id the job named and `expectedSha256` (when
 * given) the checksum its coordinator published. The header is checked against the schema (sizes
 * agree with rows and inputs), labels against the task. Matrices land in shared memory.
 */
export function decodeDataset(bytes: Buffer, expectedId: string, expectedSha256?: string): SharedDataset {
  const refuse = (reason: string): never => {
    throw new DatasetMessageError(expectedId, reason);
  };
  if (bytes.length < 8 + CHECKSUM_BYTES) refuse(`${bytes.length} bytes is too short to be a data set`);
  const body = bytes.subarray(0, bytes.length - CHECKSUM_BYTES);
  const checksum = createHash('sha256').update(body).digest();
  if (!checksum.equals(bytes.subarray(bytes.length - CHECKSUM_BYTES))) refuse('checksum does not match (cut short or altered in transit)');
  if (expectedSha256 !== undefined && checksum.toString('hex') !== expectedSha256) refuse(`its SHA-256 is not the one its coordinator published (${expectedSha256.slice(0, 12)}...): replaced on Redis`);
  if (body.toString('ascii', 0, 4) !== MAGIC) refuse('not a rungwise data set');
  const jsonLength = body.readUInt32LE(4);
  if (8 + jsonLength > body.length) refuse('header is longer than the message');
  const read = readEntry(datasetHeaderSchema, body.toString('utf8', 8, 8 + jsonLength));
  const theirs = read.ok ? read.value.protocol : undefined;
  const mismatch = theirs === undefined ? undefined : protocolMismatch(theirs, 'the data set');
  if (mismatch) refuse(mismatch);
  if (!read.ok) return refuse(`header ${read.problem}`);
  const header = read.value;
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
  const badLabel = firstBadLabel(train!.y, 'training', header) ?? firstBadLabel(validation!.y, 'validation', header);
  if (badLabel) refuse(badLabel);
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
    ...(header.costMatrix ? { costMatrix: header.costMatrix } : {}),
  };
}

function sizes(split: SharedDataset['train']): DatasetHeader['splits'][0] {
  return { rows: split.rows, x: split.x.length, y: split.y.length };
}

/** A label a classification task cannot have (not a class index below outputCount, or not 0/1 for binary). */
function firstBadLabel(y: Float32Array, split: string, header: DatasetHeader): string | undefined {
  if (header.task === 'regression') return undefined;
  const classes = header.task === 'binary' ? 2 : header.outputCount;
  for (let i = 0; i < y.length; i++) {
    const label = y[i]!;
    if (!Number.isInteger(label) || label < 0 || label >= classes) return `${split} row ${i + 1}: label ${label} is not a class index from 0 to ${classes - 1}`;
  }
  return undefined;
}
