/**
 * A `rungwise` command run as a child process with its output collected, for the fault drill and the
 * many-machines tests: wait for a line it prints, read everything it printed, learn how it ended.
 */
import { spawn, type ChildProcess } from 'node:child_process';

/** A started `rungwise` process. */
export interface CliProcess {
  child: ChildProcess;
  /** Everything printed so far, standard output and standard error together. */
  output(): string;
  /** Everything printed so far, standard output and standard error apart. */
  streams(): { stdout: string; stderr: string };
  /** Resolves once the output matches `pattern`; rejects when the process ends without printing it. */
  printed(pattern: RegExp): Promise<void>;
  /** Settles when the process has ended and its output is closed. */
  exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

export interface CliProcessOptions {
  /** Variables added to this process's environment. */
  env?: NodeJS.ProcessEnv;
  /** Named in the error when the process ends before printing what was awaited. @default 'process' */
  label?: string;
  /** Called with each chunk of output as it arrives (e.g. to log it). */
  onOutput?: (chunk: string) => void;
}

/** Run `node <bin> ...args` with piped output. */
export function spawnCliProcess(bin: string, args: readonly string[], options: CliProcessOptions = {}): CliProcess {
  const child = spawn(process.execPath, [bin, ...args], { env: { ...process.env, ...options.env }, stdio: ['ignore', 'pipe', 'pipe'] });
  let text = '';
  const apart = { stdout: '', stderr: '' };
  const waiters = new Set<() => void>();
  const onData = (stream: 'stdout' | 'stderr') => (chunk: Buffer): void => {
    text += chunk.toString();
    apart[stream] += chunk.toString();
    options.onOutput?.(chunk.toString());
    for (const waiter of waiters) waiter();
  };
  child.stdout!.on('data', onData('stdout'));
  child.stderr!.on('data', onData('stderr'));
  const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((resolve) => child.on('close', (code, signal) => resolve({ code, signal })));
  const printed = (pattern: RegExp): Promise<void> =>
    new Promise<void>((resolve, reject) => {
      const check = (): void => {
        if (!pattern.test(text)) return;
        waiters.delete(check);
        resolve();
      };
      waiters.add(check);
      check();
      void exited.then(() => (pattern.test(text) ? resolve() : reject(new Error(`${options.label ?? 'process'} ended before printing ${pattern}:\n${text}`))));
    });
  return { child, output: () => text, streams: () => ({ ...apart }), printed, exited };
}
