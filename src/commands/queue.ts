import { UserError } from '../core/errors.js';
import { waitForRedis } from '../transports/redis/connect.js';
import { loadStudyKey } from '../transports/redis/signing.js';
import { queuedStudy } from '../transports/redis/study.js';
import { DEFAULT_QUEUE_WAIT_SECONDS } from '../transports/redis/timing.js';
import type { TrialTransport } from '../transports/transport.js';

/** The flags `run` and `resume` share for a study served over Redis. */
export interface QueueFlags {
  /** `redis://HOST:PORT/DB` (or `rediss://`): jobs go to `rungwise worker` processes on any machine. */
  queue?: string;
  /** With `queue`: seconds to wait for an unreachable Redis: at the start (then exit code 2), or during the study (then it is saved and stopped). */
  queueWaitSeconds?: number;
  /** With `queue`: a file whose first line is the Redis password (else the address's, else `RUNGWISE_REDIS_PASSWORD`). */
  passwordFile?: string;
  /** With a `rediss://` queue: PEM file of the certificate authority of the server's certificate. */
  caFile?: string;
  /** With `queue`: a file holding the study key (else `RUNGWISE_STUDY_KEY`): jobs are signed and only signed results accepted. */
  keyFile?: string;
}

/** The queue flags that only make sense with `--queue`, by their option names. */
const QUEUE_ONLY: readonly [keyof QueueFlags, string][] = [
  ['queueWaitSeconds', '--queue-wait-seconds'],
  ['passwordFile', '--password-file'],
  ['caFile', '--ca-file'],
  ['keyFile', '--key-file'],
];

/** What a study command passes on to the runner when `--queue` is given, and how it ends. */
export interface QueueRun {
  transport?: () => TrialTransport;
  signal?: AbortSignal;
  /** Throws a one-line error (exit code 1) naming the resume command when Redis was lost for good. */
  check(dir: string): void;
  /** Resolves once Redis answers (at once without a queue); a one-line error (exit code 2) after the wait, an `AbortError` on interrupt. */
  ready(): Promise<void>;
}

/**
 * Wait for Redis (nothing is written before it answers), run the study command, then say (in place
 * of any other error) that Redis was lost for good, when it was.
 */
export async function settleQueued<T>(queue: QueueRun, dir: string, start: () => Promise<T>): Promise<T> {
  await queue.ready();
  const outcome = await start().catch((error: unknown) => {
    queue.check(dir);
    throw error;
  });
  queue.check(dir);
  return outcome;
}

/** Wire `--queue` into a study command (`flags.threads`: this machine's threads beside the queue, default 0); without it, nothing changes. */
export function queueRun(flags: QueueFlags & { threads?: number }, study: { name: string; dir: string; fresh: boolean }, stderr: NodeJS.WritableStream, signal?: AbortSignal): QueueRun {
  if (flags.queue === undefined) {
    const stray = QUEUE_ONLY.find(([field]) => flags[field] !== undefined)?.[1];
    if (stray) throw new UserError('E_QUEUE_FLAGS', `${stray} goes with --queue`);
    if (flags.threads === 0) throw new UserError('E_QUEUE_FLAGS', '--threads 0 goes with --queue (then only `rungwise worker` processes train); without a queue, give 1 or more');
    return { ...(signal ? { signal } : {}), check: () => undefined, ready: async () => undefined };
  }
  const key = loadStudyKey(flags.keyFile !== undefined ? { keyFile: flags.keyFile } : {});
  const served = queuedStudy({
    url: flags.queue,
    credentials: { ...(flags.passwordFile !== undefined ? { passwordFile: flags.passwordFile } : {}), ...(flags.caFile !== undefined ? { caFile: flags.caFile } : {}) },
    ...(key ? { key } : {}),
    studyName: study.name,
    runDir: study.dir,
    fresh: study.fresh,
    ...(flags.threads !== undefined ? { threads: flags.threads } : {}),
    ...(flags.queueWaitSeconds !== undefined ? { queueWaitSeconds: flags.queueWaitSeconds } : {}),
    onNote: (message) => stderr.write(`${message}\n`),
  });
  if (key) stderr.write('jobs are signed with the study key; results without its signature are refused\n');
  return {
    ready: () =>
      waitForRedis(served.address, {
        waitSeconds: flags.queueWaitSeconds ?? DEFAULT_QUEUE_WAIT_SECONDS,
        ...(signal ? { signal } : {}),
        onNote: (message) => stderr.write(`${message}\n`),
      }),
    transport: served.transport,
    signal: signal ? AbortSignal.any([signal, served.unavailable]) : served.unavailable,
    check: (dir) => {
      if (!served.unavailable.aborted) return;
      throw new UserError(
        'E_QUEUE_UNAVAILABLE',
        `Redis at ${served.address.display} stayed unreachable; the study is saved; continue it with: rungwise resume ${dir} --queue ${served.address.display}`,
        { exitCode: 1 },
      );
    },
  };
}
