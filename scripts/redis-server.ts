/**
 * A private `redis-server` (Debian's package) for tests and benchmarks: a free loopback port, a
 * temporary directory, no persistence unless asked for (append-only file), TLS when asked for. It never touches a server the machine already runs.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { mkdtemp, rm } from 'node:fs/promises';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import path from 'node:path';

export interface PrivateRedis {
  port: number;
  /** `redis://127.0.0.1:PORT/0`, with the password when one was asked for. */
  url: string;
  /** Stop the server (SIGTERM; nothing is saved) and wait until it has ended. */
  stop(): Promise<void>;
  /** Start it again on the same port: empty, or with what its append-only file kept. */
  start(): Promise<void>;
  /** Stop it and remove its directory. */
  dispose(): Promise<void>;
}

/** Fails with one clear line when redis-server is not installed (`.ci/run` installs it). */
export function requireRedisServer(): void {
  const probe = spawnSync('redis-server', ['--version'], { encoding: 'utf8' });
  if (probe.error || probe.status !== 0) {
    throw new Error('redis-server is not installed; the many-machines tests and benchmarks need it (apt-get install redis-server, as .ci/run does)');
  }
}

async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = createServer();
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => {
      const address = server.address();
      const port = typeof address === 'object' && address ? address.port : 0;
      server.close(() => resolve(port));
    });
  });
}

/** PEM files for a server that speaks only TLS (`rediss://`); clients are not asked for certificates. */
export interface PrivateRedisTls {
  certFile: string;
  keyFile: string;
  caFile: string;
}

export interface PrivateRedisOptions {
  /** Sets `requirepass`. */
  password?: string;
  /** TLS only, on the free port (the plain port is off). */
  tls?: PrivateRedisTls;
  /** Keep an append-only file in the server's directory, so a restart keeps the queues. @default false */
  appendOnly?: boolean;
  /** Sees every process started (for cleanup). */
  onSpawn?: (child: ChildProcess) => void;
}

/** Start a private server (see {@link PrivateRedisOptions}). */
export async function startPrivateRedis(options: PrivateRedisOptions = {}): Promise<PrivateRedis> {
  requireRedisServer();
  const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-redis-'));
  const port = await freePort();
  let child: ChildProcess | undefined;
  const start = async (): Promise<void> => {
    const ports = options.tls
      ? ['--port', '0', '--tls-port', String(port), '--tls-cert-file', options.tls.certFile, '--tls-key-file', options.tls.keyFile, '--tls-ca-cert-file', options.tls.caFile, '--tls-auth-clients', 'no']
      : ['--port', String(port)];
    const args = [...ports, '--bind', '127.0.0.1', '--dir', dir, '--save', '', '--appendonly', options.appendOnly ? 'yes' : 'no', '--appendfsync', 'always', '--daemonize', 'no'];
    if (options.password) args.push('--requirepass', options.password);
    const server = spawn('redis-server', args, { stdio: ['ignore', 'pipe', 'pipe'] });
    child = server;
    options.onSpawn?.(server);
    await new Promise<void>((resolve, reject) => {
      let output = '';
      server.stdout!.on('data', (chunk: Buffer) => {
        output += chunk.toString();
        if (output.includes('Ready to accept connections')) resolve();
      });
      server.once('error', reject);
      server.once('exit', (code) => reject(new Error(`redis-server on port ${port} ended (code ${code}) before it was ready:\n${output}`)));
    });
  };
  const stop = async (): Promise<void> => {
    const server = child;
    if (!server || server.exitCode !== null || server.signalCode !== null) return;
    const ended = new Promise<void>((resolve) => server.once('exit', () => resolve()));
    server.kill('SIGTERM');
    await ended;
  };
  await start();
  const secret = options.password ? `:${encodeURIComponent(options.password)}@` : '';
  return {
    port,
    url: `${options.tls ? 'rediss' : 'redis'}://${secret}127.0.0.1:${port}/0`,
    start,
    stop,
    dispose: async () => {
      await stop();
      await rm(dir, { recursive: true, force: true });
    },
  };
}
