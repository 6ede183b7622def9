/** What every command declaration under `commands/` receives, and the helper that starts one. */
import type { Command } from 'commander';
import type { WriteStepHook } from '../store/file-adapter.js';
import type { FaultInjector } from '../transports/threads/transport.js';
import { examples } from './help.js';
import type { CliIo } from './io.js';

/** What a test entry point may inject into the commands (never set by the shipped `bin/rungwise.js`). */
export interface CliInjections {
  /** Faults injected into trials (see `runner/faults.ts`). */
  faults?: FaultInjector;
  /** Called at each step of every study-file write (see `runner/faults.ts`). */
  onWriteStep?: WriteStepHook;
}

/** The program a command is declared on, and what its action needs. */
export interface CommandContext {
  program: Command;
  /** The output channels under the global flags as given (read when the action runs). */
  io: () => CliIo;
  /** Standard output, for commands that stream results (`predict --output -`). */
  stdout: NodeJS.WritableStream;
  inject: CliInjections;
}

/** One command of the command line: declares itself, its flags, its help examples and its action. */
export type CommandDeclaration = (context: CommandContext) => void;

/** A new command on the program whose `--help` ends with these examples (`[command line, what it does]`). */
export function newCommand(program: Command, name: string, lines: readonly [string, string][]): Command {
  return program.command(name).addHelpText('after', examples(lines));
}
