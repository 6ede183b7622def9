/** Heartbeats of coordinators and workers, in seconds; a worker unseen for {@link WORKER_LIVE_SECONDS} is not counted. */
export const HEARTBEAT_SECONDS = 1;
export const WORKER_LIVE_SECONDS = 5;

/**
 * A worker that stops renewing its job's lock (killed, cut off from Redis) loses the job after this
 * long; another worker then takes it up from the checkpoint it started from. Longer means fewer
 * false alarms on a slow network; shorter means less time lost when a machine dies.
 */
export const DEFAULT_STALL_SECONDS = 30;

/** How long a coordinator waits for an unreachable Redis before it saves the study as interrupted and exits 1. */
export const DEFAULT_QUEUE_WAIT_SECONDS = 120;

/** Times a job may be taken back from a worker that stopped renewing its lock before the job fails. */
export const MAX_STALLS_PER_JOB = 10;
