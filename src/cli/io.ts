import { painterFor } from '../report/style.js';

/** Where a command's output goes: results to stdout, progress and messages to stderr (none under --quiet). */
export interface CliIo {
  /** Results: tables, JSON, CSV. */
  out: (text: string) => void;
  /** Stream for informational messages and progress; false under --quiet. */
  err: NodeJS.WritableStream | false;
  /** A line for the user on stderr (suppressed by --quiet). */
  note: (text: string) => void;
  /** A warning on stderr, shown even under --quiet. */
  warn: (text: string) => void;
}

/** The program's own flags, read by every command. */
export interface GlobalFlags {
  quiet?: boolean;
  debug?: boolean;
}

/** The output channels of one command under the global flags. */
export function ioFor(flags: GlobalFlags, stdout: NodeJS.WritableStream, stderr: NodeJS.WritableStream): CliIo {
  const paint = painterFor(stderr);
  return {
    out: (text) => stdout.write(text),
    err: flags.quiet ? false : stderr,
    note: (text) => {
      if (!flags.quiet) stderr.write(`${text}\n`);
    },
    warn: (text) => stderr.write(`${paint('warning', 'warning:')} ${text}\n`),
  };
}

/** A value as the `--json` flag prints it: indented, one trailing newline. */
export function json(value: unknown): string {
  return `${JSON.stringify(value, null, 2)}\n`;
}
