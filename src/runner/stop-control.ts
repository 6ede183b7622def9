/**
 * When a study stops starting jobs: an interrupt (running jobs get a grace time, then are cut off) or
 * its time limit (running jobs finish, or are cut off at once when the study asks for that). The
 * time limit is read from an injected clock whenever the run loop is about to start a job, so a test
 * moves the clock instead of waiting.
 */
import { setMaxListeners } from 'node:events';

/** Milliseconds since some fixed moment. */
export type Clock = () => number;

/** Why a study stopped before its sampler was done. */
export type StopReason = 'interrupted' | 'time-limit';

export interface StopControlOptions {
  /** Aborting stops the study as an interrupt. */
  signal?: AbortSignal;
  /** Seconds running jobs may take to finish after an interrupt. */
  graceSeconds: number;
  /** Minutes of this session after which no job starts. @default no limit */
  minutes?: number;
  /** At the time limit, cut running jobs off (they run again on resume) instead of letting them finish. */
  cutAtLimit: boolean;
  clock: Clock;
  /** Told once, when the study stops. */
  onStop: (reason: StopReason) => void;
}

export class StopControl {
  /** Set when the study stopped; undefined while it may start jobs. */
  reason: StopReason | undefined;
  /** Aborted when running jobs must end now; they stay `running` and are redone on resume. */
  readonly cutOff = new AbortController();
  private readonly startedAt: number;
  private graceTimer: NodeJS.Timeout | undefined;
  private limitTimer: NodeJS.Timeout | undefined;
  private readonly onAbort = (): void => this.stop('interrupted');

  constructor(private readonly options: StopControlOptions) {
    setMaxListeners(Infinity, this.cutOff.signal); // one listener per running job, and a queue may run hundreds
    this.startedAt = options.clock();
    if (options.signal?.aborted) this.reason = 'interrupted';
    else options.signal?.addEventListener('abort', this.onAbort, { once: true });
    if (options.minutes !== undefined && options.cutAtLimit) {
      // Cutting off needs the moment itself, not the next start; later checks read the clock again.
      this.limitTimer = setTimeout(() => this.checkLimit(), options.minutes * 60_000);
      this.limitTimer.unref();
    }
  }

  /** Milliseconds of this session so far. */
  get elapsedMs(): number {
    return this.options.clock() - this.startedAt;
  }

  /** Milliseconds until the time limit (undefined without one). */
  get remainingMs(): number | undefined {
    return this.options.minutes === undefined ? undefined : Math.max(0, this.options.minutes * 60_000 - this.elapsedMs);
  }

  /** Whether no job may start any more (reads the clock against the time limit). */
  get stopping(): boolean {
    this.checkLimit();
    return this.reason !== undefined;
  }

  dispose(): void {
    clearTimeout(this.graceTimer);
    clearTimeout(this.limitTimer);
    this.options.signal?.removeEventListener('abort', this.onAbort);
  }

  private checkLimit(): void {
    if (this.reason === undefined && this.remainingMs === 0) this.stop('time-limit');
  }

  private stop(reason: StopReason): void {
    if (this.reason !== undefined) return;
    this.reason = reason;
    this.options.onStop(reason);
    if (reason === 'time-limit') {
      if (this.options.cutAtLimit) this.cutOff.abort();
      return;
    }
    this.graceTimer = setTimeout(() => this.cutOff.abort(), this.options.graceSeconds * 1000);
    this.graceTimer.unref();
  }
}
