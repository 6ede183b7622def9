/**
 * First Ctrl-C or SIGTERM: abort the signal (no new trials; running ones finish; the study is saved).
 * Second: exit at once; the study file stays valid because every write is atomic.
 */
export function interruptSignal(): { signal: AbortSignal; dispose: () => void } {
  const controller = new AbortController();
  // On a terminal the progress line is cleared first, so the message does not run into it.
  const lineStart = process.stderr.isTTY ? '\r\x1b[K' : '\n';
  const onSignal = (name: NodeJS.Signals): void => {
    if (controller.signal.aborted) {
      process.stderr.write(`${lineStart}${name} again: stopping now; the study file holds every trial finished so far\n`);
      process.exit(130);
    }
    process.stderr.write(`${lineStart}${name}: finishing running trials, then saving (press Ctrl-C again to stop at once)\n`);
    controller.abort();
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  return {
    signal: controller.signal,
    dispose: () => {
      process.off('SIGINT', onSignal);
      process.off('SIGTERM', onSignal);
    },
  };
}
