import { readFileSync } from 'node:fs';
import type { RedisOptions } from 'ioredis';
import { UserError } from '../../core/errors.js';
import { readSecretFile } from './signing.js';

/** A Redis address from the command line: the connection options and a form safe to print. */
export interface RedisAddress {
  /** ioredis options, password included: never print or store these. */
  options: RedisOptions;
  /** `redis://host:port/db` without user name or password, for messages and the resume command. */
  display: string;
}

/** The environment variable that holds the Redis password (used when neither the address nor a file gives one). */
export const REDIS_PASSWORD_VARIABLE = 'RUNGWISE_REDIS_PASSWORD';

/** Secrets and certificates that do not belong on the command line. */
export interface RedisCredentials {
  /** A file whose first line is the password (`--password-file`). */
  passwordFile?: string;
  /** PEM file of the certificate authority that signed the server's certificate, for `rediss://` (`--ca-file`). */
  caFile?: string;
  /** @default process.env */
  env?: NodeJS.ProcessEnv;
}

/**
 * Parse `redis://[[user]:password@]host[:port][/db]` or `rediss://...` (TLS). The password comes from
 * the address, else `credentials.passwordFile`, else {@link REDIS_PASSWORD_VARIABLE}; it stays in
 * {@link RedisAddress.options}; {@link RedisAddress.display} never holds it.
 */
export function parseRedisUrl(url: string, field = '--queue', credentials: RedisCredentials = {}): RedisAddress {
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
  if (parsed.username !== '') options.username = decoded(parsed.username, field, 'user name');
  const password = passwordOf(parsed, field, credentials);
  if (password !== undefined) options.password = password;
  if (credentials.caFile !== undefined && parsed.protocol !== 'rediss:') {
    throw new UserError('E_QUEUE_URL', `--ca-file goes with a rediss:// address (TLS); ${field} is ${parsed.protocol}//`);
  }
  if (parsed.protocol === 'rediss:') {
    options.tls = { servername: host, ...(credentials.caFile !== undefined ? { ca: readCertificates(credentials.caFile) } : {}) };
  }
  return { options, display: `${parsed.protocol}//${parsed.host}/${db}` };
}

function passwordOf(parsed: URL, field: string, credentials: RedisCredentials): string | undefined {
  if (parsed.password !== '') {
    if (credentials.passwordFile !== undefined) throw new UserError('E_QUEUE_URL', `${field} holds a password and --password-file gives one too; give it once (the file keeps it out of the process list)`);
    return decoded(parsed.password, field, 'password');
  }
  if (credentials.passwordFile !== undefined) return readSecretFile(credentials.passwordFile, '--password-file');
  const fromEnv = (credentials.env ?? process.env)[REDIS_PASSWORD_VARIABLE];
  return fromEnv === undefined || fromEnv === '' ? undefined : fromEnv;
}

/** A percent-encoded part of the address; a broken escape such as `%zz` is one line that does not echo it. */
function decoded(text: string, field: string, what: string): string {
  try {
    return decodeURIComponent(text);
  } catch {
    throw new UserError('E_QUEUE_URL', `${field}: the ${what} holds a '%' that is not followed by two hex digits; write '%' as %25 (or give the password in ${REDIS_PASSWORD_VARIABLE} or --password-file)`);
  }
}

function readCertificates(file: string): string {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (error) {
    throw new UserError('E_QUEUE_URL', `--ca-file ${file}: cannot be read (${(error as NodeJS.ErrnoException).code ?? 'unreadable'})`);
  }
  if (!text.includes('-----BEGIN CERTIFICATE-----')) throw new UserError('E_QUEUE_URL', `--ca-file ${file}: no PEM certificate in it (expected a -----BEGIN CERTIFICATE----- block)`);
  return text;
}

/** Blank out anything between `//` and `@` in a text that failed to parse as a URL. */
function redactedText(text: string): string {
  return text.replace(/\/\/[^@/]*@/, '//***@');
}
