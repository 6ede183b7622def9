/**
 * Signed queue entries: with a study key, the coordinator signs each job and a worker each epoch
 * report and result with HMAC-SHA-256 (Krawczyk, Bellare and Canetti, RFC 2104, 1997; SHA-256 from
 * FIPS 180-4), over a context line (what it is, the study queue, the job id) and the entry's JSON
 * as it crosses Redis. An entry moved to another job or study, or altered, no longer verifies.
 * The key comes from the environment or a file, never from the command line (the process list
 * shows every argument to every user of the machine).
 */
import { createHmac, timingSafeEqual } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { UserError } from '../../core/errors.js';

/** The environment variable that holds the study key. */
export const STUDY_KEY_VARIABLE = 'RUNGWISE_STUDY_KEY';
/** Shortest key accepted, in bytes: 128 bits. */
export const MIN_KEY_BYTES = 16;

/** HMAC-SHA-256 of `message` under `key` (RFC 2104 with SHA-256). */
export function hmacSha256(key: Uint8Array, message: Uint8Array | string): Buffer {
  return createHmac('sha256', key).update(message).digest();
}

/** What a signature covers: the kind of entry, its study queue and job id. */
export type SignedKind = 'job' | 'progress' | 'result';

/** A study key: signs and checks queue entries. */
export class StudyKey {
  constructor(private readonly key: Buffer) {
    if (key.length < MIN_KEY_BYTES) throw new Error(`a study key needs at least ${MIN_KEY_BYTES} bytes`);
  }

  /** Hex signature of `payload` (its JSON) as entry `kind` of job `jobId` on `queue`. */
  sign(kind: SignedKind, queue: string, jobId: string, payload: unknown): string {
    return hmacSha256(this.key, message(kind, queue, jobId, payload)).toString('hex');
  }

  /** Whether `signature` is this key's signature of `payload` (constant-time comparison). */
  verifies(kind: SignedKind, queue: string, jobId: string, payload: unknown, signature: unknown): boolean {
    if (typeof signature !== 'string' || !/^[0-9a-f]{64}$/.test(signature)) return false;
    const expected = hmacSha256(this.key, message(kind, queue, jobId, payload));
    return timingSafeEqual(expected, Buffer.from(signature, 'hex'));
  }
}

function message(kind: SignedKind, queue: string, jobId: string, payload: unknown): string {
  return `rungwise ${kind}\n${queue}\n${jobId}\n${JSON.stringify(payload)}`;
}

/** Where a study key may come from. */
export interface StudyKeySource {
  /** A file holding the key (one line; a trailing line break is not part of it). */
  keyFile?: string;
  /** @default process.env */
  env?: NodeJS.ProcessEnv;
}

/**
 * The study key from `keyFile`, else from {@link STUDY_KEY_VARIABLE}; undefined when neither is set.
 * @throws UserError (exit code 2) for an unreadable file or a key shorter than {@link MIN_KEY_BYTES}
 */
export function loadStudyKey(source: StudyKeySource = {}): StudyKey | undefined {
  const env = source.env ?? process.env;
  let text: string | undefined;
  let where: string;
  if (source.keyFile !== undefined) {
    where = `--key-file ${source.keyFile}`;
    text = readSecretFile(source.keyFile, '--key-file');
  } else {
    where = STUDY_KEY_VARIABLE;
    text = env[STUDY_KEY_VARIABLE];
    if (text === undefined || text === '') return undefined;
  }
  const key = Buffer.from(text, 'utf8');
  if (key.length < MIN_KEY_BYTES) {
    throw new UserError('E_STUDY_KEY', `${where}: the study key has ${key.length} bytes; it needs at least ${MIN_KEY_BYTES} (for example: openssl rand -hex 32)`);
  }
  return new StudyKey(key);
}

/** A secret kept in a file: its first line, without the line break. @throws UserError naming the file and the cause */
export function readSecretFile(file: string, option: string): string {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code ?? 'unreadable';
    throw new UserError('E_SECRET_FILE', `${option} ${file}: cannot be read (${code})`);
  }
  const line = text.split(/\r?\n/)[0] ?? '';
  if (line === '') throw new UserError('E_SECRET_FILE', `${option} ${file}: the file is empty; expected the secret on its first line`);
  return line;
}
