import { interruptSignal } from './interrupt.js';

/** SIGINT or SIGTERM stops a worker (its running jobs go back to the queue); a second one exits at once. */
export function workerStopSignal(): { signal: AbortSignal; dispose: () => void } {
  return interruptSignal({
    first: (name) => `${name}: handing running jobs back to the queue, then stopping (press Ctrl-C again to stop at once)\n`,
    again: (name) => `${name} again: stopping now; running jobs go back to the queue after the stall time\n`,
  });
}
