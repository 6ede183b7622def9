import { type CommandDeclaration, newCommand } from '../command.js';
import { positiveInteger } from '../options.js';
import { workerStopSignal } from '../worker-signal.js';

/** `rungwise worker <url>`: train jobs served on a Redis until stopped. */
export const workerCommand: CommandDeclaration = ({ program, inject }) => {
  newCommand(program, 'worker', [
    ['rungwise worker redis://10.0.0.5:6379/0', 'train jobs on every core until Ctrl-C or SIGTERM'],
    ['rungwise worker redis://10.0.0.5:6379/0 --threads 2', 'two jobs at once, leaving cores for other work'],
    ['rungwise worker rediss://queue.example:6380/0 --password-file redis.pass --ca-file ca.pem --stall-seconds 60', 'TLS, the password from a file; take a silent job back after a minute'],
  ])
    .description('train jobs of every study served on a Redis, until SIGINT or SIGTERM')
    .argument('<url>', 'redis://HOST:PORT/DB or rediss://HOST:PORT/DB (the password in RUNGWISE_REDIS_PASSWORD or --password-file keeps it out of the process list)')
    .option('--threads <n>', 'jobs trained at once (default: available cores)', (v) => positiveInteger(v, '--threads'))
    .option('--stall-seconds <s>', 'a job whose worker stops renewing its lock is taken back after this long (default 30)', (v) => positiveInteger(v, '--stall-seconds'))
    .option('--queue-wait-seconds <s>', 'how long Redis may stay unreachable, at the start or later, before the worker ends with exit 2 (default 120)', (v) => positiveInteger(v, '--queue-wait-seconds'))
    .option('--password-file <file>', 'the Redis password, on the first line of this file (or set RUNGWISE_REDIS_PASSWORD)')
    .option('--ca-file <file>', "with rediss://: PEM certificate of the authority that signed the server's certificate")
    .option('--key-file <file>', 'the study key, on the first line of this file (or set RUNGWISE_STUDY_KEY): only signed jobs are trained, results are signed')
    .action(async (url: string, flags: { threads?: number; stallSeconds?: number; queueWaitSeconds?: number; passwordFile?: string; caFile?: string; keyFile?: string }) => {
      const { worker } = await import('../../commands/worker.js');
      const stop = workerStopSignal();
      try {
        await worker({ url, ...flags, ...inject, signal: stop.signal });
      } finally {
        stop.dispose();
      }
    });
};
