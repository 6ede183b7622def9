import type { Job, JobOutcome, Sampler } from './sampler.js';

export interface SimulationOptions {
  /** Jobs that may run at once. */
  threads: number;
  /** The job's outcome, oriented so smaller is better (null: diverged). */
  loss: (job: Job) => number | null;
  /**
   * Virtual duration of a job; jobs finish in order of virtual end time (ties: the one handed out first).
   * @default the number of epochs the job trains
   */
  duration?: (job: Job) => number;
  /** Stop after this many reports, leaving the running jobs in {@link SimulationLog.running}. */
  stopAfterReports?: number;
  /** Jobs already handed out before the simulation starts (e.g. pending after a replay); they run first. */
  running?: readonly Job[];
  /** Called after each report to the sampler (a contract check can inspect the sampler there). */
  afterReport?: (outcome: JobOutcome) => void;
  /** Called after each job is handed out. */
  afterHandOut?: (job: Job) => void;
}

export interface SimulationLog {
  /** Jobs in hand-out order (not including `options.running`). */
  jobs: Job[];
  /** Outcomes in report order. */
  outcomes: JobOutcome[];
  /** Jobs still running when the simulation stopped early. */
  running: Job[];
  /** Virtual time when the last reported job finished. */
  elapsed: number;
  /** Sum of the durations of reported jobs. */
  busy: number;
}

/**
 * Drive a sampler with a virtual clock and a fixed number of threads, as the run loop would, but with
 * a loss function in place of training. No timers and no I/O: for tests, dry runs and planning figures.
 */
export function simulate(sampler: Sampler, options: SimulationOptions): SimulationLog {
  const duration = options.duration ?? ((job: Job) => job.toEpoch - job.fromEpoch);
  const log: SimulationLog = { jobs: [], outcomes: [], running: [], elapsed: 0, busy: 0 };
  const running: { job: Job; start: number; end: number; order: number }[] = [];
  let order = 0;
  let now = 0;
  const start = (job: Job): void => {
    const length = duration(job);
    running.push({ job, start: now, end: now + length, order: order++ });
  };
  for (const job of options.running ?? []) start(job);

  for (;;) {
    let answer: Job | 'wait' | 'done' = 'wait';
    while (running.length < options.threads) {
      answer = sampler.next();
      if (answer === 'wait' || answer === 'done') break;
      log.jobs.push(answer);
      options.afterHandOut?.(answer);
      start(answer);
    }
    if (running.length === 0) {
      if (answer === 'done') break;
      throw new Error('simulate: the sampler waits but no job is running');
    }
    if (options.stopAfterReports !== undefined && log.outcomes.length >= options.stopAfterReports) break;
    running.sort((a, b) => a.end - b.end || a.order - b.order);
    const finished = running.shift()!;
    now = finished.end;
    log.elapsed = now;
    log.busy += finished.end - finished.start;
    const outcome: JobOutcome = { trialId: finished.job.trialId, rung: finished.job.rung, loss: options.loss(finished.job) };
    log.outcomes.push(outcome);
    sampler.report(outcome);
    options.afterReport?.(outcome);
  }
  log.running = running.map((entry) => entry.job);
  return log;
}
