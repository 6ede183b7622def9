/**
 * Real processes for the many-machines tests: a `redis-server` of the test's own on a free loopback
 * port (temporary directory, persistence off) and `rungwise worker` processes. Everything started is
 * recorded and stopped by {@link stopStarted}, which the test files call in afterEach/afterAll, so
 * nothing outlives a failed test. No test uses a server the machine already runs.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { mkdtemp, rm } from 'node:fs/promises';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { BIN } from './cli.js';

const started = new Set<ChildProcess>();
const folders = new Set<string>();

/** Fails with one clear line when Debian's redis-server is not installed (CI installs it in `.ci/run`). */
export function requireRedisServer(): void {
  const probe = spawnSync('redis-server', ['--version'], { encoding: 'utf8' });
  if (probe.error || probe.status !== 0) {
    throw new Error('redis-server is not installed; these tests need it (apt-get install redis-server, as .ci/run does)');
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

export interface TestRedis {
  port: number;
  /** `redis://127.0.0.1:PORT/0` (with the password when one was asked for). */
  url: string;
  /** Stop the server (SIGTERM, nothing saved) and wait until it has ended. */
  stop(): Promise<void>;
  /** Start it again on the same port, empty. */
  start(): Promise<void>;
}

/** Start a private redis-server; `password` sets `requirepass`. */
export async function startRedis(options: { password?: string } = {}): Promise<TestRedis> {
  requireRedisServer();
  const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-redis-'));
  folders.add(dir);
  const port = await freePort();
  let child: ChildProcess | undefined;
  const start = async (): Promise<void> => {
    const args = ['--port', String(port), '--bind', '127.0.0.1', '--dir', dir, '--save', '', '--appendonly', 'no', '--daemonize', 'no'];
    if (options.password) args.push('--requirepass', options.password);
    const server = spawn('redis-server', args, { stdio: ['ignore', 'pipe', 'pipe'] });
    child = server;
    started.add(server);
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
  await start();
  const secret = options.password ? `:${encodeURIComponent(options.password)}@` : '';
  return {
    port,
    url: `redis://${secret}127.0.0.1:${port}/0`,
    start,
    stop: async () => {
      if (child) await stopProcess(child, 'SIGTERM');
    },
  };
}

/** A `rungwise worker` process with its output collected; `exited` settles when it ends. */
export interface WorkerProcess {
  child: ChildProcess;
  output: () => string;
  /** Resolves once a line matching `pattern` has been printed. */
  printed(pattern: RegExp): Promise<void>;
  exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

/** Spawn a worker process (`node bin/rungwise.js worker URL ...`); the default stall time is 2 s. */
export function spawnWorker(url: string, args: readonly string[] = [], env: NodeJS.ProcessEnv = {}): WorkerProcess {
  return spawnCli(['worker', url, '--stall-seconds', '2', ...args], env);
}

/** Spawn any CLI command as a recorded process. */
export function spawnCli(args: readonly string[], env: NodeJS.ProcessEnv = {}): WorkerProcess {
  const child = spawn(process.execPath, [BIN, ...args], { env: { ...process.env, ...env }, stdio: ['ignore', 'pipe', 'pipe'] });
  started.add(child);
  let text = '';
  const listeners = new Set<() => void>();
  const onData = (chunk: Buffer): void => {
    text += chunk.toString();
    for (const listener of listeners) listener();
  };
  child.stdout!.on('data', onData);
  child.stderr!.on('data', onData);
  const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((resolve) => {
    child.on('close', (code, signal) => resolve({ code, signal }));
  });
  return {
    child,
    output: () => text,
    exited,
    printed: (pattern) =>
      new Promise<void>((resolve, reject) => {
        const check = (): void => {
          if (pattern.test(text)) {
            listeners.delete(check);
            resolve();
          }
        };
        listeners.add(check);
        check();
        void exited.then(() => {
          if (!pattern.test(text)) reject(new Error(`process ended before printing ${pattern}:\n${text}`));
        });
      }),
  };
}

async function stopProcess(child: ChildProcess, signal: NodeJS.Signals): Promise<void> {
  if (child.exitCode !== null || child.signalCode !== null) {
    started.delete(child);
    return;
  }
  const ended = new Promise<void>((resolve) => child.once('exit', () => resolve()));
  child.kill(signal);
  await ended;
  started.delete(child);
}

/** Stop (SIGKILL) every process these helpers started and remove their folders. */
export async function stopStarted(): Promise<void> {
  await Promise.all([...started].map((child) => stopProcess(child, 'SIGKILL')));
  await Promise.all([...folders].map((dir) => rm(dir, { recursive: true, force: true })));
  folders.clear();
}
