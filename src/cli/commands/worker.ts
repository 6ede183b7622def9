import { type CommandDeclaration, newCommand } from '../command.js';
import { positiveInteger } from '../options.js';
import { workerStopSignal } from '../worker-signal.js';

/** `rungwise worker <url>`: train jobs served on a Redis until stopped. */
export const workerCommand: CommandDeclaration = ({ program, inject }) => {
  newCommand(program, 'worker', [
    ['rungwise worker redis://10.0.0.5:6379/0', 'train jobs on every core until Ctrl-C or SIGTERM'],
    ['rungwise worker redis://10.0.0.5:6379/0 --threads 2', 'two jobs at once, leaving cores for other work'],
    ['rungwise worker rediss://:secret@queue.example:6380/0 --stall-seconds 60', 'TLS with a password; take a silent job back after a minute'],
  ])
    .description('train jobs of every study served on a Redis, until SIGINT or SIGTERM')
    .argument('<url>', 'redis://HOST:PORT/DB or rediss://HOST:PORT/DB (a password as redis://:PASSWORD@HOST...)')
    .option('--threads <n>', 'jobs trained at once (default: available cores)', (v) => positiveInteger(v, '--threads'))
    .option('--stall-seconds <s>', 'a job whose worker stops renewing its lock is taken back after this long (default 30)', (v) => positiveInteger(v, '--stall-seconds'))
    .action(async (url: string, flags: { threads?: number; stallSeconds?: number }) => {
      const { worker } = await import('../../commands/worker.js');
      const stop = workerStopSignal();
      try {
        await worker({ url, ...flags, ...inject, signal: stop.signal });
      } finally {
        stop.dispose();
      }
    });
};
