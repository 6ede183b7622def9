import { spawn } from 'node:child_process';
import { fileURLToPath } from 'node:url';

/**
 * The compiled CLI as tests start it (`npm test` builds first): `bin/rungwise.js` with the test-only
 * fault switch `RUNGWISE_FAULT` injected (`test/fixtures/rungwise-test-bin.mjs`).
 */
export const BIN = fileURLToPath(new URL('../fixtures/rungwise-test-bin.mjs', import.meta.url));

export interface CliResult {
  code: number | null;
  signal: NodeJS.Signals | null;
  stdout: string;
  stderr: string;
}

/** Run the CLI as a child process and collect its output. */
export function runCli(args: readonly string[], options: { cwd?: string; env?: NodeJS.ProcessEnv } = {}): Promise<CliResult> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [BIN, ...args], {
      cwd: options.cwd,
      env: { ...process.env, ...options.env },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (chunk: Buffer) => (stdout += chunk.toString()));
    child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
    child.on('error', reject);
    child.on('close', (code, signal) => resolve({ code, signal, stdout, stderr }));
  });
}
