/**
 * What a coordinator and its remote workers say to each other through Redis, and the key names.
 * Jobs go on one BullMQ queue per study; a job's data is a {@link QueuedJob}, its return value a
 * {@link QueuedResult}; checkpoints travel inside both as base64, so no shared file system is needed.
 * Both sides check {@link QUEUE_PROTOCOL_VERSION} and refuse a mismatch.
 */
import { createHash } from 'node:crypto';
import path from 'node:path';
import { queuedJobSchema, queuedResultSchema, readEntry } from './messages.js';
import type { EpochReport, TrainJob, TrainResult } from '../../core/job.js';

/**
 * Raised whenever the job, result, data-set or registry layout changes (6: jobs may carry `timeRows` and
 * results `rowMicroseconds`, the time per row measured by the worker's thread after the job, which a
 * version-5 worker's schema would refuse; 5: jobs may carry `repeat`, a
 * repeat run after the search, which a version-4 worker's schema would refuse; 4: every entry is checked
 * against a schema, jobs carry their data set's SHA-256, entries may carry a study key's signature,
 * progress is `{ report, signature }`; 3: jobs carry `maxEpochs` and `earlyStopping`, results
 * `bestEpoch`, `stoppedAtEpoch` and `divergedAfterBest`).
 */
export const QUEUE_PROTOCOL_VERSION = 6;

/** BullMQ's key prefix and ours: everything rungwise keeps in Redis starts with it. */
export const KEY_PREFIX = 'rungwise';

export const keys = {
  /** Sorted set: queue name -> last heartbeat (ms) of its coordinator. */
  studies: `${KEY_PREFIX}:studies`,
  /** Hash: queue name -> protocol version of its coordinator. */
  studyProtocols: `${KEY_PREFIX}:study-protocols`,
  /** Sorted set: worker id -> last heartbeat (ms). */
  workers: `${KEY_PREFIX}:workers`,
  /** Hash: worker id -> JSON {@link WorkerInfo}. */
  workerInfo: `${KEY_PREFIX}:worker-info`,
  /** One data set's bytes (see `redis-dataset.ts`). */
  dataset: (id: string) => `${KEY_PREFIX}:dataset:${id}`,
  /** Set by a coordinator that gave up on a job a worker holds. */
  cancel: (queue: string, jobId: string) => `${KEY_PREFIX}:cancel:${queue}:${jobId}`,
};

/** What a worker announces with each heartbeat (checked by `workerInfoSchema` when read). */
export interface WorkerInfo {
  protocol: number;
  threads: number;
  /** `host/pid`. */
  name: string;
  /** Whether it holds a study key (signs its results). */
  signs?: boolean;
}

/** A job as it sits on the queue (checked by `queuedJobSchema` when read). */
export interface QueuedJob {
  protocol: number;
  job: Omit<TrainJob, 'checkpoint'> & { checkpoint?: string };
  /** Hex SHA-256 of the data set's message (its trailing checksum), so a worker trains on the data set the coordinator published. */
  datasetSha256: string;
  /** The study key's signature of the rest of the entry (see `redis-signing.ts`). */
  signature?: string;
}

/** A job's return value (checked by `queuedResultSchema` when read). */
export interface QueuedResult {
  protocol: number;
  result: Omit<TrainResult, 'checkpoint'> & { checkpoint?: string };
  signature?: string;
}

/** A job's progress message: one epoch report, signed with a study key. */
export interface QueuedProgress {
  report: EpochReport;
  signature?: string;
}

/** An entry read from Redis that is not what rungwise writes: the reason names the field. */
export class EntryRefusedError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'EntryRefusedError';
  }
}

/** The queue of the study in `runDir`: its name and a hash of the directory, so two studies of one name do not meet. */
export function studyQueueName(studyName: string, runDir: string): string {
  const hash = createHash('sha256').update(path.resolve(runDir)).digest('hex').slice(0, 8);
  return `${studyName.replace(/[^A-Za-z0-9._-]/g, '_')}-${hash}`;
}

/**
 * A job's id on the queue: one per trial, epoch range and data set, so a job added again (a resume, a
 * retry) is the same job, one that starts elsewhere (its checkpoint was lost) is another, and the k
 * fold jobs of a k-fold trial (same trial and epochs, one data set each) are k jobs, and a repeat run
 * (a further seed after the search) is its own job (`-r<index>`).
 */
export function queueJobId(job: Pick<TrainJob, 'trialId' | 'fromEpoch' | 'toEpoch' | 'datasetId' | 'repeat'>): string {
  const dataset = job.datasetId.replace(/^sha256:/, '').replace(/[^A-Za-z0-9]/g, '').slice(0, 8);
  return `t${job.trialId}-f${job.fromEpoch}-e${job.toEpoch}-d${dataset}${job.repeat !== undefined ? `-r${job.repeat}` : ''}`;
}

/** A job's queue entry (unsigned); `datasetSha256` is the trailing checksum of its data set's message. */
export function encodeJob(job: TrainJob, datasetSha256: string): QueuedJob {
  const { checkpoint, ...rest } = job;
  return { protocol: QUEUE_PROTOCOL_VERSION, job: { ...rest, ...(checkpoint ? { checkpoint: toBase64(checkpoint) } : {}) }, datasetSha256 };
}

/**
 * A job read from the queue: protocol checked, then every field against `queuedJobSchema`.
 * @throws ProtocolMismatchError for another protocol, EntryRefusedError naming the field for anything else
 */
export function decodeJob(data: unknown): { job: TrainJob; datasetSha256: string } {
  checkProtocol((data as { protocol?: unknown } | null)?.protocol, 'job');
  const read = readEntry(queuedJobSchema, data);
  if (!read.ok) throw new EntryRefusedError(read.problem);
  const { checkpoint, ...rest } = read.value.job;
  return { job: { ...rest, ...(checkpoint !== undefined ? { checkpoint: fromBase64(checkpoint) } : {}) }, datasetSha256: read.value.datasetSha256 };
}

export function encodeResult(result: TrainResult): QueuedResult {
  const { checkpoint, ...rest } = result;
  return { protocol: QUEUE_PROTOCOL_VERSION, result: { ...rest, ...(checkpoint ? { checkpoint: toBase64(checkpoint) } : {}) } };
}

/**
 * A job's return value (object or JSON text): protocol checked, then every field against `queuedResultSchema`.
 * @throws ProtocolMismatchError, EntryRefusedError naming the field
 */
export function decodeResult(value: unknown): TrainResult {
  const data = typeof value === 'string' ? parseJson(value) : value;
  checkProtocol((data as { protocol?: unknown } | null)?.protocol, 'result');
  const read = readEntry(queuedResultSchema, data);
  if (!read.ok) throw new EntryRefusedError(read.problem);
  const { checkpoint, ...rest } = read.value.result;
  // Figures that were not finite crossed as null (JSON has no NaN), as they always have.
  const result = rest as unknown as Omit<TrainResult, 'checkpoint'>;
  return { ...result, ...(checkpoint !== undefined ? { checkpoint: fromBase64(checkpoint) } : {}) };
}

/** JSON text read from Redis. @throws EntryRefusedError when it is not JSON */
export function parseJson(text: string): unknown {
  try {
    return JSON.parse(text) as unknown;
  } catch {
    throw new EntryRefusedError('not valid JSON');
  }
}

/** The entry without its signature: what a signature covers. */
export function unsigned<T extends { signature?: unknown }>(entry: T): Omit<T, 'signature'> {
  const { signature: _signature, ...rest } = entry;
  return rest;
}

/** One line naming both versions when a message speaks another protocol. */
export function protocolMismatch(theirs: unknown, what: string): string | undefined {
  if (theirs === QUEUE_PROTOCOL_VERSION) return undefined;
  return `${what} speaks queue protocol ${String(theirs)}, this rungwise speaks ${QUEUE_PROTOCOL_VERSION}: run the same rungwise version on the coordinator and every worker`;
}

function checkProtocol(theirs: unknown, what: string): void {
  const mismatch = protocolMismatch(theirs, `the ${what}`);
  if (mismatch) throw new ProtocolMismatchError(mismatch);
}

export class ProtocolMismatchError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'ProtocolMismatchError';
  }
}

function toBase64(bytes: Uint8Array): string {
  return Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength).toString('base64');
}

function fromBase64(text: string): Uint8Array {
  const buffer = Buffer.from(text, 'base64');
  return new Uint8Array(buffer.buffer, buffer.byteOffset, buffer.byteLength);
}
