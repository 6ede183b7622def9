import { hostname } from 'node:os';
import { UnrecoverableError, WaitingError, Worker, type Job } from 'bullmq';
import { Redis } from 'ioredis';
import { decodeDataset } from './dataset.js';
import { decodeJob, encodeResult, keys, KEY_PREFIX, protocolMismatch, QUEUE_PROTOCOL_VERSION, type QueuedJob, type QueuedResult, type WorkerInfo } from './protocol.js';
import { DEFAULT_STALL_SECONDS, HEARTBEAT_SECONDS, MAX_STALLS_PER_JOB } from './timing.js';
import { parseRedisUrl, type RedisAddress } from './url.js';
import { Slots } from '../slots.js';
import { ThreadTransport } from '../threads/transport.js';
import type { TrialTransport } from '../transport.js';
import type { SharedDataset } from '../../core/job.js';

/** Heartbeats a study may be missing from the registry before a worker leaves its queue. */
const DETACH_AFTER_TICKS = 30;

export interface QueueWorkerOptions {
  url: string | RedisAddress;
  /** Jobs trained at once, one per thread. */
  threads: number;
  /** Seconds without a lock renewal after which a job is taken back (see {@link DEFAULT_STALL_SECONDS}). */
  stallSeconds?: number;
  /** Where jobs train. @default worker threads ({@link ThreadTransport}) */
  transport?: TrialTransport;
  /** How results name this worker. @default `host/pid` */
  name?: string;
  onNote?: (message: string) => void;
}

/**
 * A `rungwise worker`: takes jobs from every study queue on one Redis, trains them on local
 * threads, sends each epoch's report as job progress and the result (checkpoint inside) as the
 * job's return value. Each data set is fetched once by id, checked and kept for later jobs.
 */
export class QueueWorker {
  readonly name: string;
  private readonly address: RedisAddress;
  private readonly redis: Redis;
  private readonly local: TrialTransport;
  private readonly slots: Slots;
  private readonly queues = new Map<string, Worker>();
  private readonly datasets = new Map<string, Promise<SharedDataset>>();
  private readonly running = new Set<AbortController>();
  private readonly missingTicks = new Map<string, number>();
  private readonly noted = new Set<string>();
  private readonly id: string;
  private timer: NodeJS.Timeout | undefined;
  private stopping = false;
  /** Jobs trained to the end by this worker. */
  jobsDone = 0;
  /** Data sets fetched from Redis (each once, then kept). */
  datasetsFetched = 0;

  constructor(private readonly options: QueueWorkerOptions) {
    this.address = typeof options.url === 'string' ? parseRedisUrl(options.url, 'worker address') : options.url;
    this.name = options.name ?? `${hostname()}/${process.pid}`;
    this.id = `${this.name}/${Date.now().toString(36)}`;
    this.redis = new Redis({ ...this.address.options, maxRetriesPerRequest: null });
    this.redis.on('error', () => this.note(`Redis at ${this.address.display} is unreachable; waiting for it`));
    this.redis.on('ready', () => this.noted.delete(`Redis at ${this.address.display} is unreachable; waiting for it`));
    this.local = options.transport ?? new ThreadTransport({ threads: options.threads });
    this.slots = new Slots(options.threads);
  }

  get display(): string {
    return this.address.display;
  }

  /** Announce this worker and attach to every study queue, now and as studies appear. */
  async start(): Promise<void> {
    await this.tick();
    this.timer = setInterval(() => void this.tick(), HEARTBEAT_SECONDS * 1000);
  }

  /** Stop taking jobs, hand running ones back to the queue (another worker takes them up), and disconnect. */
  async stop(): Promise<void> {
    if (this.stopping) return;
    this.stopping = true;
    clearInterval(this.timer);
    for (const abort of this.running) abort.abort();
    await Promise.all([...this.queues.values()].map((worker) => worker.close()));
    await this.redis.multi().zrem(keys.workers, this.id).hdel(keys.workerInfo, this.id).exec().catch(() => undefined);
    await this.local.close();
    await this.redis.quit().catch(() => undefined);
  }

  private note(message: string): void {
    if (this.noted.has(message)) return;
    this.noted.add(message);
    this.options.onNote?.(message);
  }

  /** Heartbeat, then attach to new study queues of this protocol and leave the ones whose study ended. */
  private async tick(): Promise<void> {
    if (this.stopping) return;
    try {
      const info: WorkerInfo = { protocol: QUEUE_PROTOCOL_VERSION, threads: this.options.threads, name: this.name };
      await this.redis.multi().zadd(keys.workers, Date.now(), this.id).hset(keys.workerInfo, this.id, JSON.stringify(info)).exec();
      const protocols = await this.redis.hgetall(keys.studyProtocols);
      for (const [queue, protocol] of Object.entries(protocols)) {
        if (this.queues.has(queue)) continue;
        const mismatch = protocolMismatch(Number(protocol), `study queue ${queue}`);
        if (mismatch) {
          this.note(`${mismatch}; not taking its jobs`);
          continue;
        }
        this.attach(queue);
      }
      for (const [queue, worker] of this.queues) {
        // A study gone from the registry for a while has ended (a restarted Redis is re-filled within a heartbeat).
        const missing = protocols[queue] === undefined ? (this.missingTicks.get(queue) ?? 0) + 1 : 0;
        this.missingTicks.set(queue, missing);
        if (missing >= DETACH_AFTER_TICKS) {
          this.queues.delete(queue);
          this.missingTicks.delete(queue);
          void worker.close();
        }
      }
    } catch {
      // Redis unreachable: the connection's error handler said so; the next tick tries again.
    }
  }

  private attach(queue: string): void {
    const stallMs = (this.options.stallSeconds ?? DEFAULT_STALL_SECONDS) * 1000;
    const worker = new Worker<QueuedJob, QueuedResult>(queue, (job, token) => this.process(queue, job, token), {
      connection: { ...this.address.options, maxRetriesPerRequest: null },
      prefix: KEY_PREFIX,
      concurrency: this.options.threads,
      lockDuration: stallMs,
      stalledInterval: stallMs,
      maxStalledCount: MAX_STALLS_PER_JOB,
    });
    worker.on('error', () => undefined); // connection trouble: reported once by this.redis
    this.queues.set(queue, worker);
    this.note(`taking jobs of study queue ${queue}`);
  }

  private async process(queue: string, job: Job<QueuedJob, QueuedResult>, token: string | undefined): Promise<QueuedResult> {
    const mismatch = protocolMismatch(job.data?.protocol, `job ${job.id} of study queue ${queue}`);
    if (mismatch) {
      this.note(mismatch);
      throw new UnrecoverableError(mismatch);
    }
    const release = await this.slots.acquire();
    const abort = new AbortController();
    this.running.add(abort);
    try {
      if (this.stopping) throw new Error('stopping');
      const trainJob = decodeJob(job.data);
      const cancelKey = keys.cancel(queue, String(job.id));
      if ((await this.redis.exists(cancelKey)) === 1) throw new UnrecoverableError('stopped by the coordinator');
      await this.dataset(trainJob.datasetId);
      this.options.onNote?.(`job ${job.id} of ${queue}: trial ${trainJob.trialId}, epochs ${trainJob.fromEpoch + 1}..${trainJob.toEpoch}`);
      // Progress goes out in epoch order and before the result.
      let progress = Promise.resolve();
      const result = await this.local.run(
        trainJob,
        (report) => {
          progress = progress.then(() => job.updateProgress(report as unknown as Record<string, unknown>)).catch(() => undefined);
          this.redis.exists(cancelKey).then((n) => n === 1 && abort.abort(), () => undefined);
        },
        abort.signal,
      );
      await progress;
      this.jobsDone++;
      return encodeResult({ ...result, ranOn: this.name });
    } catch (error) {
      if (this.stopping && !(error instanceof UnrecoverableError)) {
        // Handed back whole: the job waits again with its data (and starting checkpoint) unchanged.
        await job.moveToWait(token);
        throw new WaitingError();
      }
      if (abort.signal.aborted) throw new UnrecoverableError('stopped by the coordinator');
      throw error;
    } finally {
      this.running.delete(abort);
      release();
    }
  }

  /** The data set, fetched from Redis and checked the first time a job names it. */
  private dataset(id: string): Promise<SharedDataset> {
    let entry = this.datasets.get(id);
    if (!entry) {
      entry = (async () => {
        const bytes = await this.redis.getBuffer(keys.dataset(id));
        this.datasetsFetched++;
        if (!bytes) throw new Error(`data set ${id} is not on Redis (its coordinator publishes it when the study starts)`);
        const dataset = decodeDataset(bytes, id);
        await this.local.addDataset(dataset);
        return dataset;
      })();
      this.datasets.set(id, entry);
      entry.catch((error: unknown) => {
        this.datasets.delete(id); // fetched again by the next job that names it
        this.note(error instanceof Error ? error.message : String(error));
      });
    }
    return entry;
  }
}
