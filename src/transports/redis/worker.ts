import { hostname } from 'node:os';
import { UnrecoverableError, WaitingError, Worker, type Job, type JobJsonRaw } from 'bullmq';
import { Redis } from 'ioredis';
import { clientOptions } from './connect.js';
import { decodeDataset } from './dataset.js';
import { workerInfoSchema } from './messages.js';
import { decodeJob, EntryRefusedError, encodeResult, keys, KEY_PREFIX, protocolMismatch, QUEUE_PROTOCOL_VERSION, unsigned, type QueuedProgress, type QueuedResult, type WorkerInfo } from './protocol.js';
import type { StudyKey } from './signing.js';
import { DEFAULT_QUEUE_WAIT_SECONDS, DEFAULT_STALL_SECONDS, HEARTBEAT_SECONDS, MAX_STALLS_PER_JOB } from './timing.js';
import { parseRedisUrl, type RedisAddress } from './url.js';
import { Slots } from '../slots.js';
import { ThreadTransport } from '../threads/transport.js';
import type { TrialTransport } from '../transport.js';
import type { SharedDataset, TrainJob } from '../../core/job.js';

/** Heartbeats a study may be missing from the registry before a worker leaves its queue. */
const DETACH_AFTER_TICKS = 30;
/** How long an orderly stop may take before connections are cut (Redis may be down). */
const STOP_GRACE_MS = 2000;

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
  /** With a study key, jobs must carry its signature and results and epoch reports are signed. */
  key?: StudyKey;
  /** Seconds Redis may stay unreachable before {@link QueueWorkerOptions.onUnavailable}. @default {@link DEFAULT_QUEUE_WAIT_SECONDS} */
  waitSeconds?: number;
  /** Redis stayed unreachable for `waitSeconds`: the caller should stop the worker. */
  onUnavailable?: () => void;
  onNote?: (message: string) => void;
}

/** Job data BullMQ could not parse as JSON, kept as a marker so the job fails instead of staying active. */
const UNREADABLE = '__rungwise_unreadable__';

/** A BullMQ worker that turns a job whose data is not JSON into a job that fails with that reason. */
class CheckedWorker extends Worker {
  protected override createJob(data: JobJsonRaw, jobId: string): Job {
    try {
      JSON.parse(data.data || '{}');
    } catch {
      return super.createJob({ ...data, data: JSON.stringify({ [UNREADABLE]: true }) }, jobId);
    }
    return super.createJob(data, jobId);
  }
}

/**
 * A `rungwise worker`: takes jobs from every study queue on one Redis, trains them on local
 * threads, sends each epoch's report as job progress and the result (checkpoint inside) as the
 * job's return value. Each data set is fetched once by id and checksum, checked and kept for later
 * jobs. Every job is checked against its schema (and the study key, when there is one) before
 * anything is trained; a job that fails the check fails with the reason.
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
  private downTimer: NodeJS.Timeout | undefined;
  private stopping = false;
  /** Jobs trained to the end by this worker. */
  jobsDone = 0;
  /** Data sets fetched from Redis (each once, then kept). */
  datasetsFetched = 0;
  /** Jobs refused: unreadable, invalid, of no or a wrong signature. */
  jobsRefused = 0;

  constructor(private readonly options: QueueWorkerOptions) {
    this.address = typeof options.url === 'string' ? parseRedisUrl(options.url, 'worker address') : options.url;
    this.name = options.name ?? `${hostname()}/${process.pid}`;
    this.id = `${this.name}/${Date.now().toString(36)}`;
    this.redis = new Redis(clientOptions(this.address));
    this.watchConnection();
    this.local = options.transport ?? new ThreadTransport({ threads: options.threads });
    this.slots = new Slots(options.threads);
  }

  get display(): string {
    return this.address.display;
  }

  /**
   * Announce this worker and attach to every study queue, now and as studies appear. Resolves after
   * the first heartbeat, or at once if Redis does not answer it (the next ones try again), so a stop
   * is never held up by an unreachable Redis.
   */
  async start(): Promise<void> {
    this.timer = setInterval(() => void this.tick(), HEARTBEAT_SECONDS * 1000);
    await Promise.race([this.tick(), new Promise<void>((resolve) => this.redis.once('error', () => resolve()))]);
  }

  /**
   * Stop taking jobs, hand running ones back to the queue (another worker takes them up), and
   * disconnect; with Redis unreachable, connections are cut after two seconds (jobs held go back
   * after the stall time).
   */
  async stop(): Promise<void> {
    if (this.stopping) return;
    this.stopping = true;
    clearInterval(this.timer);
    clearTimeout(this.downTimer);
    for (const abort of this.running) abort.abort();
    const orderly = async (): Promise<void> => {
      await Promise.all([...this.queues.values()].map((worker) => worker.close()));
      await this.redis.multi().zrem(keys.workers, this.id).hdel(keys.workerInfo, this.id).exec();
      await this.redis.quit();
    };
    let timer: NodeJS.Timeout | undefined;
    const late = new Promise<void>((resolve) => (timer = setTimeout(resolve, STOP_GRACE_MS)));
    await Promise.race([orderly().catch(() => undefined), late]);
    clearTimeout(timer);
    for (const worker of this.queues.values()) void worker.disconnect().catch(() => undefined);
    this.redis.disconnect();
    await this.local.close();
  }

  private note(message: string): void {
    if (this.noted.has(message)) return;
    this.noted.add(message);
    this.options.onNote?.(message);
  }

  /** Say once that Redis is lost; give up after the wait; forget it when Redis is back. */
  private watchConnection(): void {
    const lostLine = `Redis at ${this.address.display} is unreachable; waiting for it`;
    const waitSeconds = this.options.waitSeconds ?? DEFAULT_QUEUE_WAIT_SECONDS;
    this.redis.on('error', () => {
      this.note(lostLine);
      if (this.downTimer || this.stopping) return;
      this.downTimer = setTimeout(() => this.options.onUnavailable?.(), waitSeconds * 1000);
      this.downTimer.unref();
    });
    this.redis.on('ready', () => {
      this.noted.delete(lostLine);
      clearTimeout(this.downTimer);
      this.downTimer = undefined;
    });
  }

  /** Heartbeat, then attach to new study queues of this protocol and leave the ones whose study ended. */
  private ticking = false;

  private async tick(): Promise<void> {
    if (this.stopping || this.ticking) return;
    this.ticking = true;
    try {
      const info: WorkerInfo = { protocol: QUEUE_PROTOCOL_VERSION, threads: this.options.threads, name: this.name, signs: this.options.key !== undefined };
      workerInfoSchema.parse(info);
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
    } finally {
      this.ticking = false;
    }
  }

  private attach(queue: string): void {
    const stallMs = (this.options.stallSeconds ?? DEFAULT_STALL_SECONDS) * 1000;
    const worker = new CheckedWorker(queue, (job, token) => this.process(queue, job, token), {
      connection: clientOptions(this.address),
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

  /**
   * The job's entry checked: readable, of this protocol, signed with the study key when there is
   * one, every field valid. @throws UnrecoverableError with the reason (the job fails; its coordinator records why)
   */
  private admit(queue: string, job: Job): { job: TrainJob; datasetSha256: string } {
    const what = `job ${job.id} of study queue ${queue}`;
    const refuse = (reason: string): never => {
      this.jobsRefused++;
      this.note(`${what} refused: ${reason}`);
      throw new UnrecoverableError(`${what} refused: ${reason}`);
    };
    const raw = job.data as Record<string, unknown> | null;
    if (raw === null || typeof raw !== 'object' || Array.isArray(raw)) return refuse('its data is not a JSON object');
    if (raw[UNREADABLE] === true) return refuse('its data is not valid JSON');
    const mismatch = protocolMismatch(raw.protocol, what);
    if (mismatch) {
      this.note(mismatch);
      throw new UnrecoverableError(mismatch);
    }
    const key = this.options.key;
    if (key) {
      if (raw.signature === undefined) refuse('it is not signed, and this worker has a study key (start the coordinator with the same key)');
      if (!key.verifies('job', queue, String(job.id), unsigned(raw), raw.signature)) refuse('its signature does not match this worker\'s study key');
    }
    try {
      return decodeJob(raw);
    } catch (error) {
      if (error instanceof EntryRefusedError) return refuse(error.message);
      throw error;
    }
  }

  private async process(queue: string, job: Job, token: string | undefined): Promise<QueuedResult> {
    const { job: trainJob, datasetSha256 } = this.admit(queue, job);
    const release = await this.slots.acquire();
    const abort = new AbortController();
    this.running.add(abort);
    const jobId = String(job.id);
    try {
      if (this.stopping) throw new Error('stopping');
      const cancelKey = keys.cancel(queue, jobId);
      if ((await this.redis.exists(cancelKey)) === 1) throw new UnrecoverableError('stopped by the coordinator');
      await this.dataset(trainJob.datasetId, datasetSha256);
      this.options.onNote?.(`job ${job.id} of ${queue}: trial ${trainJob.trialId}, epochs ${trainJob.fromEpoch + 1}..${trainJob.toEpoch}`);
      // Progress goes out in epoch order and before the result.
      let progress = Promise.resolve();
      const result = await this.local.run(
        trainJob,
        (report) => {
          const message: QueuedProgress = { report, ...(this.options.key ? { signature: this.options.key.sign('progress', queue, jobId, report) } : {}) };
          progress = progress.then(() => job.updateProgress(message as unknown as Record<string, unknown>)).catch(() => undefined);
          this.redis.exists(cancelKey).then((n) => n === 1 && abort.abort(), () => undefined);
        },
        abort.signal,
      );
      await progress;
      this.jobsDone++;
      const entry = encodeResult({ ...result, ranOn: this.name });
      return this.options.key ? { ...entry, signature: this.options.key.sign('result', queue, jobId, entry) } : entry;
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

  /** The data set, fetched from Redis and checked (against the checksum the job names) the first time a job names it. */
  private dataset(id: string, sha256: string): Promise<SharedDataset> {
    const cacheKey = `${id}/${sha256}`;
    let entry = this.datasets.get(cacheKey);
    if (!entry) {
      entry = (async () => {
        const bytes = await this.redis.getBuffer(keys.dataset(id));
        this.datasetsFetched++;
        if (!bytes) throw new Error(`data set ${id} is not on Redis (its coordinator publishes it when the study starts)`);
        const dataset = decodeDataset(bytes, id, sha256);
        await this.local.addDataset(dataset);
        return dataset;
      })();
      this.datasets.set(cacheKey, entry);
      entry.catch((error: unknown) => {
        this.datasets.delete(cacheKey); // fetched again by the next job that names it
        this.note(error instanceof Error ? error.message : String(error));
      });
    }
    return entry;
  }
}
