/**
 * Reaching Redis: reconnection with backoff for every client, and {@link waitForRedis}, which a
 * coordinator and a worker call before they start: it tries again with backoff, says once which
 * server it cannot reach and why, and gives up after a deadline with one line (exit code 2), so a
 * wrong address never leaves a process waiting forever. A refused password or certificate is not
 * worth waiting for: it ends at once.
 */
import { Redis } from 'ioredis';
import { UserError } from '../../core/errors.js';
import type { RedisAddress } from './url.js';

/** Milliseconds before reconnection attempt `attempt` (1, 2, ...): 0.2 s, doubling, at most 5 s. */
export function backoffMs(attempt: number): number {
  return Math.min(200 * 2 ** Math.max(0, attempt - 1), 5000);
}

/** ioredis options every rungwise client uses: reconnect with {@link backoffMs}, commands wait while it does. */
export function clientOptions(address: RedisAddress): RedisAddress['options'] {
  return { ...address.options, maxRetriesPerRequest: null, retryStrategy: backoffMs };
}

export interface WaitForRedisOptions {
  /** Seconds to keep trying before giving up. */
  waitSeconds: number;
  /** Aborting stops the wait at once (an `AbortError`). */
  signal?: AbortSignal;
  /** One line when the first attempt fails. */
  onNote?: (message: string) => void;
  /** Names the option that sets the deadline, in the error. @default '--queue-wait-seconds' */
  option?: string;
}

/** Errors that trying again will not cure. */
function lastingProblem(error: Error & { code?: string }): string | undefined {
  if (/WRONGPASS|NOAUTH|invalid (username-)?password|AUTH failed/i.test(error.message)) {
    return 'it refused the password (give it in the address, --password-file or RUNGWISE_REDIS_PASSWORD)';
  }
  if (/CERT|certificate|self[- ]signed|ALTNAME/i.test(`${error.code ?? ''} ${error.message}`)) {
    return `its TLS certificate was not accepted (${error.code ?? error.message}); give the certificate authority with --ca-file`;
  }
  return undefined;
}

/**
 * Resolve once Redis at `address` answers; reject with a one-line {@link UserError} (exit code 2)
 * after `waitSeconds`, or at once for a refused password or certificate.
 */
export async function waitForRedis(address: RedisAddress, options: WaitForRedisOptions): Promise<void> {
  if (options.signal?.aborted) throw abortError();
  const client = new Redis({ ...clientOptions(address), lazyConnect: true });
  let lastError = '';
  let said = false;
  try {
    await new Promise<void>((resolve, reject) => {
      const timer = setTimeout(() => {
        settle();
        reject(new UserError('E_QUEUE_UNREACHABLE', `Redis at ${address.display} could not be reached in ${options.waitSeconds} s (${lastError || 'no answer'}); check that redis-server runs there and the address is right (${options.option ?? '--queue-wait-seconds'} sets how long to try)`));
      }, options.waitSeconds * 1000);
      const onAbort = (): void => {
        settle();
        reject(abortError());
      };
      options.signal?.addEventListener('abort', onAbort, { once: true });
      function settle(): void {
        clearTimeout(timer);
        options.signal?.removeEventListener('abort', onAbort);
      }
      client.on('ready', () => {
        settle();
        resolve();
      });
      client.on('error', (error: Error & { code?: string }) => {
        lastError = error.code ?? error.message;
        const lasting = lastingProblem(error);
        if (lasting) {
          settle();
          reject(new UserError('E_QUEUE_REFUSED', `Redis at ${address.display}: ${lasting}`));
          return;
        }
        if (!said) options.onNote?.(`Redis at ${address.display} is not reachable (${lastError}); trying again with backoff for up to ${options.waitSeconds} s`);
        said = true;
      });
      client.connect().catch(() => undefined); // failures arrive as 'error' events
    });
  } finally {
    client.disconnect();
  }
}

function abortError(): Error {
  const error = new Error('stopped while waiting for Redis');
  error.name = 'AbortError';
  return error;
}
