/**
 * The command line: the program and its list of commands (each declared in `commands/`). Every action
 * loads its command module when it runs, so `--help` and `--version` never load tfjs, the chart
 * library or the runner.
 */
import { Command, CommanderError } from 'commander';
import { isUserError } from '../core/errors.js';
import { packageVersion } from '../files/package-files.js';
import { painterFor } from '../report/style.js';
import type { CliInjections } from './command.js';
import { COMMANDS } from './commands/index.js';
import { PROGRAM_EXAMPLES } from './help.js';
import { type GlobalFlags, ioFor } from './io.js';

export type { CliInjections } from './command.js';
export type { CliIo } from './io.js';

/** The program with every command declared; each action calls one function of `src/commands`. */
export function buildProgram(
  stdout: NodeJS.WritableStream = process.stdout,
  stderr: NodeJS.WritableStream = process.stderr,
  inject: CliInjections = {},
): Command {
  const program = new Command('rungwise')
    .description('Tune small neural networks on ordinary CPUs.')
    .version(packageVersion(), '-V, --version', 'print the version and exit')
    .option('-q, --quiet', 'no progress and no messages: only results (and errors) are written')
    .option('--debug', 'show the stack of internal errors')
    .exitOverride()
    .showSuggestionAfterError(true)
    .addHelpText('after', PROGRAM_EXAMPLES)
    .configureOutput({ writeOut: (text) => stdout.write(text), writeErr: (text) => stderr.write(text) });
  const io = () => ioFor(program.opts<GlobalFlags>(), stdout, stderr);
  for (const declare of COMMANDS) declare({ program, io, stdout, inject });
  return program;
}

/** An error as the user sees it on stderr: one marked line per problem, or an internal error. Returns the exit code. */
function reportError(error: unknown, debug: boolean): number {
  const paint = painterFor(process.stderr);
  // On a terminal a progress line may stand where the message goes: clear it first.
  const lineStart = process.stderr.isTTY ? '\r\x1b[K' : '';
  if (isUserError(error)) {
    // One line per problem, each marked, so every line can be read (and grepped) alone.
    process.stderr.write(lineStart + error.message.split('\n').map((line) => `${paint('error', 'error:')} ${line}\n`).join(''));
    return error.exitCode;
  }
  const message = error instanceof Error ? error.message : String(error);
  process.stderr.write(`${lineStart}${paint('error', 'internal error:')} ${message}\n`);
  if (debug && error instanceof Error && error.stack) process.stderr.write(`${error.stack}\n`);
  else process.stderr.write('(run again with --debug for the stack)\n');
  return 1;
}

/** Runs the CLI; the only place that turns errors into exit codes. Returns the exit code. */
export async function main(argv: readonly string[], inject: CliInjections = {}): Promise<number> {
  // Output piped into a command that stops reading (`| head`) is not an error: a study goes on.
  process.stdout.on('error', (error: NodeJS.ErrnoException) => {
    if (error.code !== 'EPIPE') throw error;
  });
  const program = buildProgram(process.stdout, process.stderr, inject);
  try {
    process.exitCode = undefined;
    await program.parseAsync([...argv]);
    return typeof process.exitCode === 'number' ? process.exitCode : 0;
  } catch (error) {
    // Help and version are "errors" with exit code 0; usage errors are user errors.
    if (error instanceof CommanderError) return error.exitCode === 0 ? 0 : 2;
    return reportError(error, argv.includes('--debug'));
  }
}
