/** What a stopping command says on the first SIGINT or SIGTERM and on the second (which exits 130 at once). */
export interface StopMessages {
  first: (signal: NodeJS.Signals) => string;
  again: (signal: NodeJS.Signals) => string;
}

const STUDY_MESSAGES: StopMessages = {
  first: (name) => `${name}: finishing the trials in training, then saving (press Ctrl-C again to stop at once)\n`,
  again: (name) => `${name} again: stopping now; the study file holds every trial finished so far\n`,
};

/**
 * First Ctrl-C or SIGTERM: abort the signal (for a study: no new trials; running ones finish; the
 * study is saved). Second: exit at once; the study file stays valid because every write is atomic.
 */
export function interruptSignal(messages: StopMessages = STUDY_MESSAGES): { signal: AbortSignal; dispose: () => void } {
  const controller = new AbortController();
  // On a terminal the progress line is cleared first, so the message does not run into it.
  const lineStart = process.stderr.isTTY ? '\r\x1b[K' : '\n';
  const onSignal = (name: NodeJS.Signals): void => {
    if (controller.signal.aborted) {
      process.stderr.write(`${lineStart}${messages.again(name)}`);
      process.exit(130);
    }
    process.stderr.write(`${lineStart}${messages.first(name)}`);
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
