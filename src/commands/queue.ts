import { UserError } from '../core/errors.js';
import { queuedStudy } from '../transports/redis/study.js';
import type { TrialTransport } from '../transports/transport.js';

/** The flags `run` and `resume` share for a study served over Redis. */
export interface QueueFlags {
  /** `redis://HOST:PORT/DB` (or `rediss://`): jobs go to `rungwise worker` processes on any machine. */
  queue?: string;
  /** With `queue`: local threads training beside the workers (0 for none). @default 0 */
  threads?: number;
  /** With `queue`: seconds to wait for an unreachable Redis before saving and stopping. */
  queueWaitSeconds?: number;
}

/** What a study command passes on to the runner when `--queue` is given, and how it ends. */
export interface QueueRun {
  transport?: () => TrialTransport;
  signal?: AbortSignal;
  /** Throws a one-line error (exit code 1) naming the resume command when Redis was lost for good. */
  check(dir: string): void;
}

/** Await a study command's run, then say (in place of any other error) that Redis was lost for good, when it was. */
export async function settleQueued<T>(queue: QueueRun, dir: string, running: Promise<T>): Promise<T> {
  const outcome = await running.catch((error: unknown) => {
    queue.check(dir);
    throw error;
  });
  queue.check(dir);
  return outcome;
}

/** Wire `--queue` into a study command; without it, nothing changes. */
export function queueRun(flags: QueueFlags, study: { name: string; dir: string; fresh: boolean }, stderr: NodeJS.WritableStream, signal?: AbortSignal): QueueRun {
  if (flags.queue === undefined) {
    const stray = flags.threads !== undefined ? '--threads' : flags.queueWaitSeconds !== undefined ? '--queue-wait-seconds' : undefined;
    if (stray) throw new UserError('E_QUEUE_FLAGS', `${stray} goes with --queue; without a queue, --workers sets the local threads`);
    return { ...(signal ? { signal } : {}), check: () => undefined };
  }
  const served = queuedStudy({
    url: flags.queue,
    studyName: study.name,
    runDir: study.dir,
    fresh: study.fresh,
    ...(flags.threads !== undefined ? { threads: flags.threads } : {}),
    ...(flags.queueWaitSeconds !== undefined ? { queueWaitSeconds: flags.queueWaitSeconds } : {}),
    onNote: (message) => stderr.write(`${message}\n`),
  });
  return {
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
