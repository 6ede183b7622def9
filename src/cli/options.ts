/** Flag parsers and flag groups that several commands share. */
import { type Command, InvalidArgumentError, Option } from 'commander';
import type { QueueFlags } from '../commands/queue.js';

/** A flag value that must be a whole number from 0 up. */
export function wholeNumber(value: string, name: string): number {
  const parsed = Number(value);
  if (!Number.isInteger(parsed) || parsed < 0) throw new InvalidArgumentError(`${name} must be a whole number from 0 up, got '${value}'`);
  return parsed;
}

/** A flag value that must be a whole number from 1 up. */
export function positiveInteger(value: string, name: string): number {
  const parsed = Number(value);
  if (!Number.isInteger(parsed) || parsed < 1) throw new InvalidArgumentError(`${name} must be a whole number from 1 up, got '${value}'`);
  return parsed;
}

/** `--queue` and its companions, the same on `run` and `resume`. */
export function queueOptions(command: Command): Command {
  return command
    .option('--queue <url>', 'serve the study over Redis to `rungwise worker` processes (redis://HOST:PORT/DB or rediss://)')
    .option('--queue-wait-seconds <s>', 'with --queue: how long to wait for an unreachable Redis, at the start (then exit 2) or during the study (then save and stop) (default 120)', (v) => positiveInteger(v, '--queue-wait-seconds'))
    .option('--password-file <file>', 'with --queue: the Redis password, on the first line of this file (or set RUNGWISE_REDIS_PASSWORD)')
    .option('--ca-file <file>', "with a rediss:// queue: PEM certificate of the authority that signed the server's certificate")
    .option('--key-file <file>', 'with --queue: the study key, on the first line of this file (or set RUNGWISE_STUDY_KEY): jobs are signed, unsigned results refused');
}

/** The queue flags as commander parses them: the command functions' own `QueueFlags`. */
export type QueueFlagValues = QueueFlags;

/** The queue flags that were given, for the study commands. */
export function queueFlags(flags: QueueFlagValues): QueueFlagValues {
  return {
    ...(flags.queue !== undefined ? { queue: flags.queue } : {}),
    ...(flags.queueWaitSeconds !== undefined ? { queueWaitSeconds: flags.queueWaitSeconds } : {}),
    ...(flags.passwordFile !== undefined ? { passwordFile: flags.passwordFile } : {}),
    ...(flags.caFile !== undefined ? { caFile: flags.caFile } : {}),
    ...(flags.keyFile !== undefined ? { keyFile: flags.keyFile } : {}),
  };
}

/** `--minutes` and `--cut-at-limit`, the same on `run` and `resume`. */
export function limitOptions(command: Command): Command {
  return command
    .option('--minutes <m>', "minutes this session may start jobs, fractions allowed (default: the study's budget.minutes, else no limit)", positiveMinutes)
    .option('--cut-at-limit', 'at the time limit, cut running jobs off at their next epoch instead of letting them finish (they run again on resume)');
}

export interface LimitFlagValues {
  minutes?: number;
  cutAtLimit?: boolean;
}

/** The time-limit flags that were given, for the study commands. */
export function limitFlags(flags: LimitFlagValues): LimitFlagValues {
  return {
    ...(flags.minutes !== undefined ? { minutes: flags.minutes } : {}),
    ...(flags.cutAtLimit ? { cutAtLimit: true } : {}),
  };
}

/** A flag value that must be a number of minutes above 0. */
export function positiveMinutes(value: string): number {
  const parsed = Number(value);
  if (value.trim() === '' || !Number.isFinite(parsed) || parsed <= 0) throw new InvalidArgumentError(`--minutes must be a number of minutes above 0 (fractions allowed), got '${value}'`);
  return parsed;
}

/** `--top <n>`. */
export const topFlag = (value: string): number => positiveInteger(value, '--top');
/** `--threads <n>` (and its old name `--workers`, hidden from the help), on `run`, `resume` and `demo`. */
export function threadsOptions(command: Command, defaults: string): Command {
  return command
    .option('--threads <n>', `threads of this machine training jobs at once (${defaults})`, (v) => wholeNumber(v, '--threads'))
    .addOption(new Option('--workers <n>', 'old name of --threads').hideHelp().argParser((v) => wholeNumber(v, '--workers')));
}

export interface ThreadsFlagValues {
  threads?: number;
  /** The old name of `threads`. */
  workers?: number;
}

/**
 * The threads asked for: `--threads`, else the old `--workers` (with a note that it was renamed: a
 * worker is a `rungwise worker` process).
 */
export function threadsFlag(flags: ThreadsFlagValues, note: (message: string) => void): { threads?: number } {
  if (flags.workers !== undefined && flags.threads === undefined) note('--workers is the old name of --threads (a worker is a `rungwise worker` process); read as --threads');
  const threads = flags.threads ?? flags.workers;
  return threads !== undefined ? { threads } : {};
}
