import type { RedisOptions } from 'ioredis';
import { UserError } from '../../core/errors.js';

/** A Redis address from the command line: the connection options and a form safe to print. */
export interface RedisAddress {
  /** ioredis options, password included: never print or store these. */
  options: RedisOptions;
  /** `redis://host:port/db` without user name or password, for messages and the resume command. */
  display: string;
}

/**
 * Parse `redis://[[user]:password@]host[:port][/db]` or `rediss://...` (TLS). The password stays in
 * {@link RedisAddress.options}; {@link RedisAddress.display} never holds it.
 */
export function parseRedisUrl(url: string, field = '--queue'): RedisAddress {
  let parsed: URL;
  try {
    parsed = new URL(url);
  } catch {
    throw new UserError('E_QUEUE_URL', `${field}: '${redactedText(url)}' is not a URL; expected redis://HOST:PORT/DB or rediss://HOST:PORT/DB`);
  }
  if (parsed.protocol !== 'redis:' && parsed.protocol !== 'rediss:') {
    throw new UserError('E_QUEUE_URL', `${field}: scheme '${parsed.protocol.replace(/:$/, '')}' is not allowed; expected redis:// or rediss://`);
  }
  const dbText = parsed.pathname.replace(/^\//, '') || '0';
  const db = Number(dbText);
  if (!Number.isInteger(db) || db < 0) throw new UserError('E_QUEUE_URL', `${field}: database '${dbText}' must be a whole number from 0 up`);
  const port = parsed.port === '' ? 6379 : Number(parsed.port);
  const host = parsed.hostname.replace(/^\[(.*)\]$/, '$1');
  if (host === '') throw new UserError('E_QUEUE_URL', `${field}: no host in ${parsed.protocol}// address`);
  const options: RedisOptions = { host, port, db };
  if (parsed.username !== '') options.username = decodeURIComponent(parsed.username);
  if (parsed.password !== '') options.password = decodeURIComponent(parsed.password);
  if (parsed.protocol === 'rediss:') options.tls = { servername: host };
  return { options, display: `${parsed.protocol}//${parsed.host}/${db}` };
}

/** Blank out anything between `//` and `@` in a text that failed to parse as a URL. */
function redactedText(text: string): string {
  return text.replace(/\/\/[^@/]*@/, '//***@');
}
