import { RedisTransport } from './coordinator.js';
import { studyQueueName } from './protocol.js';
import type { StudyKey } from './signing.js';
import { parseRedisUrl, type RedisAddress, type RedisCredentials } from './url.js';
import { RoutedTransport } from '../routed.js';
import { ThreadTransport } from '../threads/transport.js';
import type { TrialTransport } from '../transport.js';

export interface QueuedStudyOptions {
  /** `redis://...` or `rediss://...`, password allowed. */
  url: string;
  /** Password file and certificate authority (the password may also come from the environment). */
  credentials?: RedisCredentials;
  /** Sign jobs and accept only results signed with this key. */
  key?: StudyKey;
  studyName: string;
  runDir: string;
  /** A new study (`run`): the queue is emptied first. A resumed one keeps jobs in flight and collects them. */
  fresh: boolean;
  /** Local threads training beside the queue. @default 0 */
  threads?: number;
  queueWaitSeconds?: number;
  onNote?: (message: string) => void;
}

/** The transport factory for a study served over Redis, and what the command needs to know afterwards. */
export interface QueuedStudy {
  address: RedisAddress;
  transport: () => TrialTransport;
  /** Aborts when Redis stayed unreachable for the whole wait. */
  unavailable: AbortSignal;
}

/** Jobs go to `threads` local threads while they have room, the rest to the study's queue on Redis. */
export function queuedStudy(options: QueuedStudyOptions): QueuedStudy {
  const address = parseRedisUrl(options.url, '--queue', options.credentials);
  const unavailable = new AbortController();
  const transport = (): TrialTransport => {
    const threads = options.threads ?? 0;
    const remote = new RedisTransport({
      url: address,
      minimumCapacity: threads > 0 ? 0 : 1,
      queue: studyQueueName(options.studyName, options.runDir),
      fresh: options.fresh,
      ...(options.key ? { key: options.key } : {}),
      ...(options.queueWaitSeconds !== undefined ? { queueWaitSeconds: options.queueWaitSeconds } : {}),
      ...(options.onNote ? { onNote: options.onNote } : {}),
      onUnavailable: () => unavailable.abort(),
    });
    return threads > 0 ? new RoutedTransport(new ThreadTransport({ threads }), remote) : remote;
  };
  return { address, transport, unavailable: unavailable.signal };
}
