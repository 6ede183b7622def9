/**
 * The fault drill: a study served over Redis to two workers survives what a night on many machines
 * brings, and ends with the ranking of the same study run undisturbed. Real processes throughout:
 * a private redis-server with its append-only file on, a coordinator (`rungwise run --queue`) and
 * two workers (`rungwise worker`), all with one study key. While the study runs the drill
 *
 * 1. adds a worker registry entry with a thread count of `1abc` and a forged completion (a perfect
 *    score) for a job in flight: both must be refused;
 * 2. kills a worker with SIGKILL and starts another in its place;
 * 3. restarts Redis (SIGTERM, then the same port and folder: the append-only file brings the queues back);
 * 4. stops a worker with SIGSTOP for longer than the stall time, then lets it go on (SIGCONT);
 *
 * then compares `ranking --json` with that of the undisturbed run (local threads). Exit code 0 when
 * they are equal and every fault happened, 1 otherwise.
 *
 * Usage: `npm run drill` (or `node dist/scripts/fault-drill.js [--trials N]` after `npm run build`).
 * Needs redis-server (Debian: apt-get install redis-server).
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { encodeResult, keys, KEY_PREFIX, QUEUE_PROTOCOL_VERSION, studyQueueName } from '../src/transports/redis/protocol.js';
import { parseRedisUrl } from '../src/transports/redis/url.js';
import { startPrivateRedis, type PrivateRedis } from './redis-server.js';

const HERE = path.dirname(fileURLToPath(import.meta.url));
/** The repository: two folders up from `dist/scripts`, one from `scripts` (tests run the source). */
const ROOT = path.basename(path.dirname(HERE)) === 'dist' ? path.resolve(HERE, '..', '..') : path.resolve(HERE, '..');
const BIN = path.join(ROOT, 'bin', 'rungwise.js');
const STALL_SECONDS = 2;

/** A process of the drill with its output, and a way to wait for a line. */
interface Started {
  child: ChildProcess;
  output(): string;
  printed(pattern: RegExp): Promise<void>;
  exited: Promise<number | null>;
}

const processes = new Set<ChildProcess>();

function start(args: readonly string[], env: NodeJS.ProcessEnv, label: string): Started {
  const child = spawn(process.execPath, [BIN, ...args], { env: { ...process.env, ...env }, stdio: ['ignore', 'pipe', 'pipe'] });
  processes.add(child);
  let text = '';
  const waiters = new Set<() => void>();
  const onData = (chunk: Buffer): void => {
    text += chunk.toString();
    for (const line of chunk.toString().split('\n').filter(Boolean)) log(`  ${label}: ${line}`);
    for (const waiter of waiters) waiter();
  };
  child.stdout!.on('data', onData);
  child.stderr!.on('data', onData);
  const exited = new Promise<number | null>((resolve) => child.on('close', (code) => resolve(code)));
  return {
    child,
    output: () => text,
    exited,
    printed: (pattern) =>
      new Promise<void>((resolve, reject) => {
        const check = (): void => {
          if (pattern.test(text)) {
            waiters.delete(check);
            resolve();
          }
        };
        waiters.add(check);
        check();
        void exited.then(() => (pattern.test(text) ? resolve() : reject(new Error(`${label} ended before printing ${pattern}`))));
      }),
  };
}

let verbose = false;
function log(line: string): void {
  if (verbose) process.stdout.write(`${line}\n`);
}

function say(line: string): void {
  process.stdout.write(`${line}\n`);
}

/** Resolves once the coordinator has printed `count` finished jobs. */
function jobsEnded(coordinator: Started, count: number): Promise<void> {
  return coordinator.printed(new RegExp(`\\[${count}/\\d+ jobs`));
}

async function rankingOf(dir: string): Promise<unknown> {
  const ranking = start(['ranking', dir, '--json'], {}, 'ranking');
  ranking.child.stderr!.removeAllListeners('data'); // stdout only: the JSON
  await ranking.exited;
  type Row = { rank?: number; trial: number; status: string; epochs: number; score?: number; configuration: unknown; metrics?: unknown };
  const parsed = JSON.parse(ranking.output()) as { trials: Row[] };
  // Place, trial, status, epochs, score, configuration and every metric: equal rankings of equal trials.
  return parsed.trials.map((t) => [t.rank, t.trial, t.status, t.epochs, t.score, t.configuration, t.metrics]);
}

/** The drill's study: the tiny demo data with successive halving, long enough for every fault to land mid-study. */
async function writeStudy(dir: string, trials: number): Promise<string> {
  const definition = {
    name: 'fault-drill',
    data: { csv: path.join(ROOT, 'studies', 'tiny', 'tiny.csv'), target: 'fails_within_week', task: 'binary', splitSeed: 1 },
    space: { depth: { min: 1, max: 2 }, width: { min: 4, max: 16, log: true }, activation: ['relu', 'tanh'], learningRate: { min: 0.003, max: 0.1 }, batchSize: [16, 32], optimizer: ['adam'] },
    budget: { trials, maxEpochs: 9 },
    sampler: { kind: 'successive-halving', eta: 3, minEpochs: 1, seed: 7 },
    goal: { metric: 'auc' },
    threads: 2,
  };
  const file = path.join(dir, 'study.json');
  await writeFile(file, JSON.stringify(definition, null, 2));
  return file;
}

/** Inject a worker registry entry that is not a number of threads, and a forged completion for a job in flight. */
async function injectForgeries(redis: PrivateRedis, queueName: string): Promise<string> {
  const client = new Redis(parseRedisUrl(redis.url).options);
  const queue = new Queue(queueName, { connection: parseRedisUrl(redis.url).options, prefix: KEY_PREFIX });
  try {
    await client.zadd(keys.workers, Date.now() + 600_000, 'forged-host/1');
    await client.hset(keys.workerInfo, 'forged-host/1', JSON.stringify({ protocol: QUEUE_PROTOCOL_VERSION, threads: '1abc', name: 'forged-host/1' }));
    let target: string | undefined;
    while (!target) {
      const jobs = await queue.getJobs(['active', 'waiting']);
      target = jobs.find((job) => job.id)?.id;
      if (!target) await new Promise((resolve) => setTimeout(resolve, 20));
    }
    const trialId = Number(/^t(\d+)-/.exec(target)?.[1] ?? 0);
    const epochs = [1].map((epoch) => ({ trialId, epoch, trainLoss: 0, validationLoss: 0, metrics: { auc: 1 }, seconds: 0 }));
    const forged = encodeResult({ trialId, status: 'completed', epochs, workerSeconds: 0, ranOn: 'forger/1' });
    await client.xadd(`${KEY_PREFIX}:${queueName}:events`, '*', 'event', 'completed', 'jobId', target, 'returnvalue', JSON.stringify(forged), 'prev', 'active');
    return target;
  } finally {
    await queue.close();
    client.disconnect();
  }
}

/** Run the drill; returns whether the disturbed study ended with the undisturbed ranking. */
export async function faultDrill(options: { trials?: number; verbose?: boolean } = {}): Promise<boolean> {
  verbose = options.verbose ?? false;
  const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-drill-'));
  const studyFile = await writeStudy(dir, options.trials ?? 27);
  const env = { RUNGWISE_STUDY_KEY: randomBytes(32).toString('hex') };
  const redis = await startPrivateRedis({ appendOnly: true });
  try {
    say('undisturbed run on local threads ...');
    const reference = start(['run', studyFile, '--out', path.join(dir, 'reference'), '--threads', '2', '--quiet'], {}, 'reference');
    if ((await reference.exited) !== 0) throw new Error(`the undisturbed run failed:\n${reference.output()}`);

    say(`disturbed run over Redis on port ${redis.port} (append-only file on, study key set) ...`);
    const workerArgs = ['worker', redis.url, '--threads', '1', '--stall-seconds', String(STALL_SECONDS)];
    const first = start(workerArgs, env, 'worker 1');
    const second = start(workerArgs, env, 'worker 2');
    await Promise.all([first.printed(/taking jobs from/), second.printed(/taking jobs from/)]);
    const out = path.join(dir, 'disturbed');
    const coordinator = start(['run', studyFile, '--out', out, '--queue', redis.url], env, 'coordinator');

    await jobsEnded(coordinator, 2);
    const forgedJob = await injectForgeries(redis, studyQueueName('fault-drill', out));
    say(`injected: a registry entry of 1abc threads, a forged completion for job ${forgedJob}`);

    await jobsEnded(coordinator, 6);
    first.child.kill('SIGKILL');
    await first.exited;
    const third = start(workerArgs, env, 'worker 3');
    say('killed worker 1 (SIGKILL) and started worker 3');

    await jobsEnded(coordinator, 12);
    await redis.stop();
    await coordinator.printed(/is unreachable/);
    await redis.start();
    say('restarted Redis (the append-only file kept the queues)');

    await jobsEnded(coordinator, 18);
    second.child.kill('SIGSTOP');
    await new Promise((resolve) => setTimeout(resolve, (STALL_SECONDS * 2 + 1) * 1000));
    second.child.kill('SIGCONT');
    say(`stopped worker 2 (SIGSTOP) for ${STALL_SECONDS * 2 + 1} s, longer than its stall time of ${STALL_SECONDS} s, then let it go on`);

    const code = await coordinator.exited;
    for (const worker of [second, third]) worker.child.kill('SIGTERM');
    await Promise.all([second.exited, third.exited]);
    const refusedRegistry = /worker registry entry forged-host\/1 ignored/.test(coordinator.output());
    const refusedResult = new RegExp(`result of job ${forgedJob} refused`).test(coordinator.output());
    const [expected, actual] = [await rankingOf(path.join(dir, 'reference')), await rankingOf(out)];
    const same = JSON.stringify(expected) === JSON.stringify(actual);
    say(`coordinator exit code: ${code}`);
    say(`malformed registry entry refused: ${refusedRegistry ? 'yes' : 'NO'}`);
    say(`forged completion refused: ${refusedResult ? 'yes' : 'NO'}`);
    say(`trials: ${(actual as unknown[]).length}; ranking equals the undisturbed run's: ${same ? 'yes' : 'NO'}`);
    return code === 0 && refusedRegistry && refusedResult && same;
  } finally {
    for (const child of processes) if (child.exitCode === null && child.signalCode === null) child.kill('SIGKILL');
    await redis.dispose();
    await rm(dir, { recursive: true, force: true });
  }
}

if (process.argv[1] && fileURLToPath(import.meta.url) === path.resolve(process.argv[1])) {
  const trialsAt = process.argv.indexOf('--trials');
  const trials = trialsAt > 0 ? Number(process.argv[trialsAt + 1]) : undefined;
  const started = Date.now();
  const ok = await faultDrill({ ...(trials ? { trials } : {}), verbose: process.argv.includes('--verbose') });
  say(`fault drill ${ok ? 'passed' : 'FAILED'} in ${((Date.now() - started) / 1000).toFixed(1)} s`);
  process.exitCode = ok ? 0 : 1;
}
