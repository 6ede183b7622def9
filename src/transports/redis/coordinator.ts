import { Queue, QueueEvents } from 'bullmq';
import { Redis } from 'ioredis';
import { encodeDataset } from './dataset.js';
import { decodeResult, encodeJob, keys, KEY_PREFIX, protocolMismatch, queueJobId, QUEUE_PROTOCOL_VERSION, type QueuedResult, type WorkerInfo } from './protocol.js';
import { DEFAULT_QUEUE_WAIT_SECONDS, HEARTBEAT_SECONDS, WORKER_LIVE_SECONDS } from './timing.js';
import { parseRedisUrl, type RedisAddress } from './url.js';
import type { TrialTransport } from '../transport.js';
import type { EpochReport, SharedDataset, TrainJob, TrainResult } from '../../core/job.js';

export interface RedisTransportOptions {
  /** `redis://[:password@]host:port/db` or `rediss://...`, or an address already parsed. */
  url: string | RedisAddress;
  /** The study's queue (see `studyQueueName`). */
  queue: string;
  /** A new study: empty the queue of anything an earlier study in the same directory left. @default false */
  fresh?: boolean;
  /** Seconds to wait for an unreachable Redis before {@link RedisTransportOptions.onUnavailable}. @default {@link DEFAULT_QUEUE_WAIT_SECONDS} */
  queueWaitSeconds?: number;
  /** Messages for the user (Redis lost and found, workers attached, protocol mismatches). */
  onNote?: (message: string) => void;
  /**
   * Capacity while no worker is attached. 1 lets the first job wait on the queue for a worker; 0 suits
   * a queue beside local threads, which then take every job until workers come. @default 1
   */
  minimumCapacity?: 0 | 1;
  /** Redis stayed unreachable for `queueWaitSeconds`: the caller should stop the study (running jobs stay pending until aborted). */
  onUnavailable?: () => void;
}

/**
 * Queue events kept in Redis. A completion event carries the result (checkpoint included), so this
 * bounds their memory; an event trimmed before the coordinator read it is found by the next sweep.
 */
const EVENTS_KEPT = 200;

/** One attempt per job (the run loop decides on retries); kept after it ends until the coordinator has collected it. */
const JOB_OPTIONS = (jobId: string) => ({ jobId, attempts: 1, removeOnComplete: false, removeOnFail: false });

interface PendingJob {
  id: string;
  job: TrainJob;
  /** Pass an epoch report on once (progress events may repeat after a rerun, or be missed). */
  report: (report: EpochReport) => void;
  resolve: (result: TrainResult) => void;
  reject: (error: Error) => void;
  /** A submission is under way: the sweep leaves the job alone. */
  submitting: boolean;
}

/**
 * The coordinator's side of a study served over Redis: jobs go on a BullMQ queue named after the
 * study, `rungwise worker` processes on any machine train them, epoch reports come back as job
 * progress and results as return values (checkpoints inside, as base64). Data sets are published
 * once per id. Capacity is the number of threads of the live workers of this protocol on the Redis
 * (at least {@link RedisTransportOptions.minimumCapacity}). Every {@link HEARTBEAT_SECONDS} a
 * sweep also checks each job in flight, so a lost event, a Redis restart that emptied the queue, or
 * a job finished while no coordinator was listening is settled or the job added again.
 */
export class RedisTransport implements TrialTransport {
  private readonly address: RedisAddress;
  private readonly redis: Redis;
  private readonly queue: Queue;
  private readonly events: QueueEvents;
  private readonly pending = new Map<string, PendingJob>();
  private readonly datasets = new Map<string, Buffer>();
  private readonly noted = new Set<string>();
  /** Job ids put on the queue in this session. */
  private readonly submitted = new Set<string>();
  private readonly started: Promise<void>;
  private rejectStart: (error: Error) => void = () => undefined;
  private workerThreads = 0;
  private workersCounted = false;
  private sweepTimer: NodeJS.Timeout | undefined;
  private downTimer: NodeJS.Timeout | undefined;
  private reachable = false;
  private closed = false;
  /** True once Redis stayed unreachable for the whole wait. */
  gaveUp = false;

  constructor(private readonly options: RedisTransportOptions) {
    this.address = typeof options.url === 'string' ? parseRedisUrl(options.url) : options.url;
    const connection = { ...this.address.options, maxRetriesPerRequest: null };
    this.redis = new Redis(connection);
    this.queue = new Queue(options.queue, { connection: this.redis, prefix: KEY_PREFIX, streams: { events: { maxLen: EVENTS_KEPT } } });
    this.events = new QueueEvents(options.queue, { connection, prefix: KEY_PREFIX });
    // Connection errors are reported by the watch on `this.redis`; an unheard 'error' would end the process.
    this.queue.on('error', () => undefined);
    this.events.on('error', () => undefined);
    this.watchConnection();
    this.events.on('completed', ({ jobId, returnvalue }) => this.collect(jobId, returnvalue as unknown));
    this.events.on('failed', ({ jobId, failedReason }) => this.fail(jobId, failedReason));
    this.events.on('progress', ({ jobId, data }) => {
      const report = data as unknown as EpochReport;
      if (typeof report === 'object' && report !== null && typeof report.epoch === 'number') this.pending.get(jobId)?.report(report);
    });
    this.started = new Promise<void>((resolve, reject) => {
      this.rejectStart = reject;
      void this.start().then(resolve, reject);
    });
    this.started.catch(() => undefined);
  }

  /** Address for messages and the resume command: never the password. */
  get display(): string {
    return this.address.display;
  }

  get capacity(): number {
    return Math.max(this.options.minimumCapacity ?? 1, this.workerThreads);
  }

  async addDataset(dataset: SharedDataset): Promise<void> {
    await this.started;
    const bytes = encodeDataset(dataset);
    this.datasets.set(dataset.id, bytes);
    await this.redis.set(keys.dataset(dataset.id), bytes);
  }

  async run(job: TrainJob, onEpoch: (report: EpochReport) => void, signal: AbortSignal): Promise<TrainResult> {
    await this.started;
    if (signal.aborted) throw new Error(`trial ${job.trialId}: stopped`);
    const id = queueJobId(job);
    return new Promise<TrainResult>((resolve, reject) => {
      const onAbort = (): void => {
        if (this.pending.get(id) !== entry) return;
        this.pending.delete(id);
        // Reject once the job is off the queue (or flagged), or after a second when Redis does not answer.
        let timer: NodeJS.Timeout | undefined;
        const late = new Promise<void>((resolve) => (timer = setTimeout(resolve, 1000)));
        void Promise.race([this.cancel(id), late]).then(() => {
          clearTimeout(timer);
          reject(new Error(`trial ${job.trialId}: stopped`));
        });
      };
      const reported = new Set<number>();
      const entry: PendingJob = {
        id,
        job,
        report: (report) => {
          if (reported.has(report.epoch)) return;
          reported.add(report.epoch);
          onEpoch(report);
        },
        submitting: false,
        resolve: (result) => {
          signal.removeEventListener('abort', onAbort);
          resolve(result);
        },
        reject: (error) => {
          signal.removeEventListener('abort', onAbort);
          reject(error);
        },
      };
      this.pending.set(id, entry);
      signal.addEventListener('abort', onAbort, { once: true });
      void this.submit(entry);
    });
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    clearInterval(this.sweepTimer);
    clearTimeout(this.downTimer);
    for (const entry of this.pending.values()) entry.reject(new Error(`trial ${entry.job.trialId}: the queue transport was closed`));
    this.pending.clear();
    const orderly = async (): Promise<void> => {
      if (this.reachable) await this.redis.multi().zrem(keys.studies, this.options.queue).hdel(keys.studyProtocols, this.options.queue).exec();
      await this.events.close();
      await this.queue.close();
      await this.redis.quit();
    };
    // An unreachable Redis must not hold the coordinator: give an orderly close two seconds.
    let timer: NodeJS.Timeout | undefined;
    const late = new Promise<void>((resolve) => {
      timer = setTimeout(resolve, 2000);
    });
    await Promise.race([orderly().catch(() => undefined), late]);
    clearTimeout(timer);
    this.redis.disconnect();
    await this.events.disconnect().catch(() => undefined);
  }

  private async start(): Promise<void> {
    await this.queue.waitUntilReady();
    await this.events.waitUntilReady();
    if (this.options.fresh) await this.queue.obliterate({ force: true });
    await this.sweep();
    this.sweepTimer = setInterval(() => void this.sweep(), HEARTBEAT_SECONDS * 1000);
    this.sweepTimer.unref();
  }

  private note(message: string, once = true): void {
    if (once && this.noted.has(message)) return;
    this.noted.add(message);
    this.options.onNote?.(message);
  }

  /** Redis lost: say so and start the give-up clock; Redis back: say so and sweep at once. */
  private watchConnection(): void {
    const waitSeconds = this.options.queueWaitSeconds ?? DEFAULT_QUEUE_WAIT_SECONDS;
    const lost = (): void => {
      if (this.closed || this.downTimer) return;
      this.reachable = false;
      this.note(`Redis at ${this.display} is unreachable; waiting up to ${waitSeconds} s for it (jobs in flight stay in flight)`, false);
      this.downTimer = setTimeout(() => {
        this.gaveUp = true;
        this.rejectStart(new Error(`Redis at ${this.display} stayed unreachable for ${waitSeconds} s`));
        this.options.onUnavailable?.();
      }, waitSeconds * 1000);
      this.downTimer.unref();
    };
    this.redis.on('ready', () => {
      this.reachable = true;
      if (this.downTimer) {
        clearTimeout(this.downTimer);
        this.downTimer = undefined;
        if (!this.gaveUp) this.note(`Redis at ${this.display} is reachable again`, false);
        void this.sweep();
      }
    });
    this.redis.on('close', lost);
    this.redis.on('error', lost);
  }

  /** Put the job on the queue, unless the same job is there already (added before a coordinator restart): then follow it. */
  private async submit(entry: PendingJob): Promise<void> {
    entry.submitting = true;
    try {
      // A new study's queue was emptied: a job seen for the first time needs no look for an earlier one.
      const seenBefore = !this.options.fresh || this.submitted.has(entry.id);
      this.submitted.add(entry.id);
      if (!seenBefore) {
        await this.queue.add('train', encodeJob(entry.job), JOB_OPTIONS(entry.id));
        if (this.pending.get(entry.id) !== entry) await this.cancel(entry.id); // stopped while it was being added
        return;
      }
      await this.redis.del(keys.cancel(this.options.queue, entry.id));
      const existing = await this.queue.getJob(entry.id);
      if (existing) {
        const state = await existing.getState();
        if (state === 'completed') return this.collect(entry.id, existing.returnvalue as unknown);
        if (state !== 'failed') return; // waiting or being trained: its result will come
        await existing.remove(); // a failure from before: this is a new attempt
      }
      if (this.pending.get(entry.id) !== entry) return; // stopped meanwhile
      await this.queue.add('train', encodeJob(entry.job), JOB_OPTIONS(entry.id));
    } catch (error) {
      if (!this.closed) this.note(`job ${entry.id}: could not be queued yet (${error instanceof Error ? error.message : String(error)}); trying again`);
    } finally {
      entry.submitting = false;
    }
  }

  private collect(jobId: string, returnvalue: unknown): void {
    const entry = this.pending.get(jobId);
    if (!entry) return;
    this.pending.delete(jobId);
    try {
      const value = (typeof returnvalue === 'string' ? JSON.parse(returnvalue) : returnvalue) as QueuedResult;
      const result = decodeResult(value);
      for (const report of result.epochs) entry.report(report); // any whose progress event was missed
      entry.resolve(result);
    } catch (error) {
      entry.reject(error instanceof Error ? error : new Error(String(error)));
    }
    void this.queue.remove(jobId).catch(() => undefined);
  }

  private fail(jobId: string, reason: string): void {
    const entry = this.pending.get(jobId);
    if (!entry) return;
    this.pending.delete(jobId);
    entry.reject(new Error(reason));
  }

  /** Stop a job: off the queue if it is waiting, else flagged so its worker ends it at the next epoch. */
  private async cancel(jobId: string): Promise<void> {
    try {
      await this.redis.set(keys.cancel(this.options.queue, jobId), '1', 'EX', 3600);
      await this.queue.remove(jobId);
    } catch {
      // Locked by a worker (it sees the flag) or Redis unreachable (the job is added again on resume).
    }
  }

  private sweeping = false;

  /** Heartbeat, count the workers, keep data sets published, and check every job in flight. */
  private async sweep(): Promise<void> {
    if (this.sweeping || this.closed || !this.reachable) return;
    this.sweeping = true;
    try {
      const now = Date.now();
      await this.redis.multi().zadd(keys.studies, now, this.options.queue).hset(keys.studyProtocols, this.options.queue, String(QUEUE_PROTOCOL_VERSION)).exec();
      await this.countWorkers(now);
      for (const [id, bytes] of this.datasets) {
        if ((await this.redis.exists(keys.dataset(id))) === 0) await this.redis.set(keys.dataset(id), bytes);
      }
      for (const entry of [...this.pending.values()]) {
        if (entry.submitting || this.pending.get(entry.id) !== entry) continue;
        const state = await this.queue.getJobState(entry.id);
        if (this.pending.get(entry.id) !== entry) continue; // settled or stopped meanwhile
        if (state === 'completed' || state === 'failed') {
          const job = await this.queue.getJob(entry.id);
          if (state === 'completed') this.collect(entry.id, job?.returnvalue as unknown);
          else this.fail(entry.id, job?.failedReason ?? 'failed');
        } else if (state === 'unknown') {
          this.note(`job ${entry.id} is no longer on Redis (was the server restarted?); putting it on the queue again`, false);
          await this.submit(entry);
        }
      }
    } catch {
      // Redis went away during the sweep: the connection watch reports it; the next sweep tries again.
    } finally {
      this.sweeping = false;
    }
  }

  private async countWorkers(now: number): Promise<void> {
    const ids = await this.redis.zrangebyscore(keys.workers, now - WORKER_LIVE_SECONDS * 1000, '+inf');
    const infos = ids.length > 0 ? await this.redis.hmget(keys.workerInfo, ...ids) : [];
    let threads = 0;
    for (const text of infos) {
      if (!text) continue;
      const info = JSON.parse(text) as WorkerInfo;
      const mismatch = protocolMismatch(info.protocol, `worker ${info.name}`);
      if (mismatch) this.note(`${mismatch}; it takes no jobs of this study`);
      else threads += info.threads;
    }
    if (threads !== this.workerThreads || !this.workersCounted) this.note(this.workersNote(threads), false);
    this.workersCounted = true;
    this.workerThreads = threads;
  }

  private workersNote(threads: number): string {
    return threads === 0
      ? `no worker attached to ${this.display} yet; jobs wait on queue ${this.options.queue} (start one with: rungwise worker ${this.display})`
      : `workers attached to ${this.display}: ${threads} threads`;
  }
}
