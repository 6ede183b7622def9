import { Queue, QueueEvents } from 'bullmq';
import { Redis } from 'ioredis';
import { clientOptions } from './connect.js';
import { datasetChecksum, encodeDataset } from './dataset.js';
import { queuedProgressSchema, readEntry, workerInfoSchema } from './messages.js';
import { decodeJob, decodeResult, encodeJob, EntryRefusedError, keys, KEY_PREFIX, parseJson, protocolMismatch, queueJobId, QUEUE_PROTOCOL_VERSION, unsigned } from './protocol.js';
import type { StudyKey } from './signing.js';
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
  /** With a study key, jobs are signed and results and epoch reports must carry the workers' signature. */
  key?: StudyKey;
}

/** Entries read from Redis and refused (invalid, unsigned or wrongly signed), by kind. */
export interface RefusedEntries {
  results: number;
  progress: number;
  workers: number;
  jobs: number;
}

/** Times a job's stored result may be refused before the job fails with the reason. */
const RESULT_REFUSALS_PER_JOB = 3;

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
  /** Stored results of this job refused so far. */
  refusals: number;
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
  /** Entries refused since the start, by kind. */
  readonly refused: RefusedEntries = { results: 0, progress: 0, workers: 0, jobs: 0 };

  constructor(private readonly options: RedisTransportOptions) {
    this.address = typeof options.url === 'string' ? parseRedisUrl(options.url) : options.url;
    const connection = clientOptions(this.address);
    this.redis = new Redis(connection);
    this.queue = new Queue(options.queue, { connection: this.redis, prefix: KEY_PREFIX, streams: { events: { maxLen: EVENTS_KEPT } } });
    this.events = new QueueEvents(options.queue, { connection, prefix: KEY_PREFIX });
    // Connection errors are reported by the watch on `this.redis`; an unheard 'error' would end the process.
    this.queue.on('error', () => undefined);
    this.events.on('error', () => undefined);
    this.watchConnection();
    this.events.on('completed', ({ jobId, returnvalue }) => this.collect(jobId, returnvalue as unknown, 'event'));
    this.events.on('failed', ({ jobId, failedReason }) => this.fail(jobId, failedReason));
    this.events.on('progress', ({ jobId, data }) => this.progress(jobId, data));
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
        refusals: 0,
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
    // Not awaited: with Redis unreachable these wait for a connection that never comes.
    void this.events.disconnect().catch(() => undefined);
    void this.queue.disconnect().catch(() => undefined);
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
        await this.queue.add('train', this.entryOf(entry), JOB_OPTIONS(entry.id));
        if (this.pending.get(entry.id) !== entry) await this.cancel(entry.id); // stopped while it was being added
        return;
      }
      await this.redis.del(keys.cancel(this.options.queue, entry.id));
      const existing = await this.queue.getJob(entry.id).catch((error: unknown) => this.unreadableEntry(entry.id, error));
      if (existing) {
        const state = await existing.getState();
        const problem = this.problemWithStoredJob(entry.id, existing.data);
        if (problem && state !== 'active') {
          this.refused.jobs++;
          this.note(`job ${entry.id} found on the queue was not the coordinator's (${problem}); putting the coordinator's job in its place`, false);
          await existing.remove();
        } else {
          if (state === 'completed') return this.collect(entry.id, existing.returnvalue as unknown, 'stored');
          if (state !== 'failed') return; // waiting or being trained: its result will come
          await existing.remove(); // a failure from before: this is a new attempt
        }
      }
      if (this.pending.get(entry.id) !== entry) return; // stopped meanwhile
      await this.queue.add('train', this.entryOf(entry), JOB_OPTIONS(entry.id));
    } catch (error) {
      if (!this.closed) this.note(`job ${entry.id}: could not be queued yet (${error instanceof Error ? error.message : String(error)}); trying again`);
    } finally {
      entry.submitting = false;
    }
  }

  /** The job's queue entry: its data set's checksum, and the study key's signature when there is one. */
  private entryOf(entry: PendingJob): ReturnType<typeof encodeJob> {
    const bytes = this.datasets.get(entry.job.datasetId);
    if (!bytes) throw new Error(`job ${entry.id}: data set ${entry.job.datasetId} was not added to the transport`);
    const data = encodeJob(entry.job, datasetChecksum(bytes));
    return this.options.key ? { ...data, signature: this.options.key.sign('job', this.options.queue, entry.id, data) } : data;
  }

  /** Why a job entry found on the queue is not one this coordinator wrote (undefined: it is). */
  private problemWithStoredJob(jobId: string, data: unknown): string | undefined {
    try {
      decodeJob(data);
    } catch (error) {
      return error instanceof Error ? error.message : String(error);
    }
    const key = this.options.key;
    const raw = data as { signature?: unknown };
    if (key && !key.verifies('job', this.options.queue, jobId, unsigned(raw), raw.signature)) return 'not signed with the study key';
    return undefined;
  }

  /** BullMQ could not read the stored job (its data is not JSON): treated as absent after one warning. */
  private unreadableEntry(jobId: string, error: unknown): undefined {
    this.refused.jobs++;
    this.note(`job ${jobId} found on the queue is unreadable (${error instanceof Error ? error.message : String(error)}); putting the coordinator's job in its place`, false);
    void this.queue.remove(jobId).catch(() => undefined);
    return undefined;
  }

  /**
   * A result read from Redis: checked against the schema and, with a study key, its signature.
   * A refused completion event is ignored (the sweep reads the job's stored state); a refused stored
   * result puts the job on the queue again, and fails it after {@link RESULT_REFUSALS_PER_JOB}.
   */
  private collect(jobId: string, returnvalue: unknown, from: 'event' | 'stored'): void {
    const entry = this.pending.get(jobId);
    // With a key, a completion of a job no longer in flight is still checked: a forgery is counted whenever it comes.
    if (!entry && !this.options.key) return;
    let result: TrainResult;
    try {
      result = this.checkedResult(jobId, returnvalue);
    } catch (error) {
      if (!(error instanceof EntryRefusedError)) {
        this.pending.delete(jobId);
        entry?.reject(error instanceof Error ? error : new Error(String(error)));
        return;
      }
      this.refused.results++;
      this.note(`result of job ${jobId} refused (${from === 'event' ? 'completion event' : 'stored on the queue'}): ${error.message}; ${this.refused.results} result(s) refused so far`, false);
      if (from === 'stored' && entry) this.retryRefused(entry, error.message);
      return;
    }
    if (!entry) return;
    this.pending.delete(jobId);
    for (const report of result.epochs) entry.report(report); // any whose progress event was missed
    entry.resolve(result);
    void this.queue.remove(jobId).catch(() => undefined);
  }

  private checkedResult(jobId: string, returnvalue: unknown): TrainResult {
    const value = typeof returnvalue === 'string' ? parseJson(returnvalue) : returnvalue;
    const result = decodeResult(value);
    const key = this.options.key;
    if (key) {
      const raw = value as { signature?: unknown };
      if (raw.signature === undefined) throw new EntryRefusedError('not signed; with a study key every worker must hold the same key');
      if (!key.verifies('result', this.options.queue, jobId, unsigned(raw), raw.signature)) throw new EntryRefusedError('its signature does not match the study key');
    }
    return result;
  }

  /** A refused stored result: the job is trained again, or fails with the reason after too many refusals. */
  private retryRefused(entry: PendingJob, reason: string): void {
    entry.refusals++;
    if (entry.refusals >= RESULT_REFUSALS_PER_JOB) {
      this.pending.delete(entry.id);
      entry.reject(new Error(`job ${entry.id}: its result was refused ${entry.refusals} times (${reason})`));
      void this.queue.remove(entry.id).catch(() => undefined);
      return;
    }
    entry.submitting = true;
    void this.queue
      .remove(entry.id)
      .then(async () => {
        if (this.pending.get(entry.id) === entry) await this.queue.add('train', this.entryOf(entry), JOB_OPTIONS(entry.id));
      })
      .catch(() => undefined)
      .finally(() => (entry.submitting = false));
  }

  /** An epoch report from a progress event: checked, and with a study key verified; refused ones are counted and dropped (the result repeats every report). */
  private progress(jobId: string, data: unknown): void {
    const entry = this.pending.get(jobId);
    if (!entry) return;
    const read = readEntry(queuedProgressSchema, data);
    const key = this.options.key;
    const problem = !read.ok
      ? read.problem
      : key && !key.verifies('progress', this.options.queue, jobId, read.value.report, read.value.signature)
        ? read.value.signature === undefined ? 'not signed' : 'its signature does not match the study key'
        : undefined;
    if (problem || !read.ok) {
      this.refused.progress++;
      this.note(`epoch report of job ${jobId} refused: ${problem}`);
      return;
    }
    entry.report(read.value.report as unknown as EpochReport);
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
          if (state === 'completed') this.collect(entry.id, job?.returnvalue as unknown, 'stored');
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
    infos.forEach((text, index) => {
      if (!text) return;
      const read = readEntry(workerInfoSchema, text);
      if (!read.ok) {
        if (!this.noted.has(`worker entry ${ids[index]}`)) this.refused.workers++;
        this.note(`worker registry entry ${ids[index]} ignored: ${read.problem}`);
        this.noted.add(`worker entry ${ids[index]}`);
        return;
      }
      const info = read.value;
      const mismatch = protocolMismatch(info.protocol, `worker ${info.name}`);
      if (mismatch) return this.note(`${mismatch}; it takes no jobs of this study`);
      if (this.options.key && info.signs === false) this.note(`worker ${info.name} has no study key; its results will be refused (start it with the study's key in RUNGWISE_STUDY_KEY or --key-file)`);
      threads += info.threads;
    });
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
