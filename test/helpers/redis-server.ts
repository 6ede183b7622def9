/**
 * Real processes for the many-machines tests: a `redis-server` of the test's own on a free loopback
 * port (temporary directory, persistence off) and `rungwise worker` processes. Everything started is
 * recorded and stopped by {@link stopStarted}, which the test files call in afterEach/afterAll, so
 * nothing outlives a failed test. No test uses a server the machine already runs.
 */
import type { ChildProcess } from 'node:child_process';
import { spawnCliProcess, type CliProcess } from '../../scripts/cli-process.js';
import { startPrivateRedis, type PrivateRedis, type PrivateRedisOptions } from '../../scripts/redis-server.js';
import { BIN } from './cli.js';

const started = new Set<ChildProcess>();
const servers = new Set<PrivateRedis>();

export type TestRedis = PrivateRedis;

/** Start a private redis-server, stopped by {@link stopStarted}; `password` sets `requirepass`, `tls` serves rediss:// only. */
export async function startRedis(options: Omit<PrivateRedisOptions, 'onSpawn'> = {}): Promise<TestRedis> {
  const redis = await startPrivateRedis({ ...options, onSpawn: (child) => started.add(child) });
  servers.add(redis);
  return redis;
}

/** A `rungwise worker` (or other CLI) process with its output collected; `exited` settles when it ends. */
export type WorkerProcess = CliProcess;

/** Spawn a worker process (`node bin/rungwise.js worker URL ...`); the default stall time is 2 s. */
export function spawnWorker(url: string, args: readonly string[] = [], env: NodeJS.ProcessEnv = {}): WorkerProcess {
  return spawnCli(['worker', url, '--stall-seconds', '2', ...args], env);
}

/** Spawn any CLI command as a recorded process. */
export function spawnCli(args: readonly string[], env: NodeJS.ProcessEnv = {}): WorkerProcess {
  const process_ = spawnCliProcess(BIN, args, { env, label: args[0] ?? 'rungwise' });
  started.add(process_.child);
  return process_;
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

/** Stop (SIGKILL) every process these helpers started and remove the servers' folders. */
export async function stopStarted(): Promise<void> {
  await Promise.all([...started].map((child) => stopProcess(child, 'SIGKILL')));
  await Promise.all([...servers].map((server) => server.dispose()));
  servers.clear();
}
