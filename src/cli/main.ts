import { Command, CommanderError, InvalidArgumentError } from 'commander';
import { isUserError } from '../errors.js';
import { run } from '../commands/run.js';
import { ranking } from '../commands/ranking.js';
import { resume } from '../commands/resume.js';
import { plot } from '../commands/plot.js';
import { compare } from '../commands/compare.js';
import { exportModel, exportReport } from '../commands/export.js';
import { predict, predictReport } from '../commands/predict.js';
import { interruptSignal } from './interrupt.js';

function positiveInteger(value: string, name: string): number {
  const parsed = Number(value);
  if (!Number.isInteger(parsed) || parsed < 1) throw new InvalidArgumentError(`${name} must be a whole number from 1 up, got '${value}'`);
  return parsed;
}

/** Run a study command with Ctrl-C handling; an interrupted study says how to go on and exits 130. */
async function untilInterrupted(
  command: (signal: AbortSignal) => Promise<{ dir: string; doc: { state: string } }>,
  write: (text: string) => void,
): Promise<void> {
  const interrupt = interruptSignal();
  try {
    const outcome = await command(interrupt.signal);
    if (outcome.doc.state === 'interrupted') {
      write(`study interrupted; continue it with: rungwise resume ${outcome.dir}\n`);
      process.exitCode = 130;
    }
  } finally {
    interrupt.dispose();
  }
}

/** Declares the commands and flags; each action calls one function of `src/commands`. */
export function buildProgram(write: (text: string) => void): Command {
  const program = new Command('rungwise')
    .description('Tune small neural networks on ordinary CPUs.')
    .option('--debug', 'show the stack of internal errors')
    .exitOverride()
    .showSuggestionAfterError(true)
    .configureOutput({ writeOut: write, writeErr: (text) => process.stderr.write(text) });

  program
    .command('run')
    .description('launch a study from its definition file')
    .argument('<definition>', 'study definition (JSON)')
    .option('--out <dir>', 'run directory (default: runs/<study name>)')
    .option('--workers <n>', 'worker threads (default: the study\'s, else available cores)', (v) => positiveInteger(v, '--workers'))
    .option('--top <n>', 'configurations shown at the end', (v) => positiveInteger(v, '--top'), 10)
    .option('--force', 'replace a run directory that already holds a study')
    .action(async (definition: string, flags: { out?: string; workers?: number; top: number; force?: boolean }) => {
      await untilInterrupted((signal) => run({ definition, ...flags, signal }), write);
    });

  program
    .command('resume')
    .description('continue an interrupted study')
    .argument('<dir>', 'run directory')
    .option('--workers <n>', 'worker threads (default: the study\'s, else available cores)', (v) => positiveInteger(v, '--workers'))
    .option('--top <n>', 'configurations shown at the end', (v) => positiveInteger(v, '--top'), 10)
    .action(async (dir: string, flags: { workers?: number; top: number }) => {
      await untilInterrupted((signal) => resume({ dir, ...flags, signal }), write);
    });

  program
    .command('ranking')
    .description('print the ranking from a saved study file')
    .argument('<dir>', 'run directory')
    .option('--top <n>', 'configurations shown', (v) => positiveInteger(v, '--top'), 10)
    .option('--json', 'print JSON')
    .action(async (dir: string, flags: { top: number; json?: boolean }) => {
      write(`${await ranking({ dir, ...flags })}\n`);
    });

  program
    .command('plot')
    .description('draw charts and an offline HTML report from a saved study file')
    .argument('<dir>', 'run directory')
    .option('--out <dir>', 'folder for the charts (default: <dir>/plots)')
    .option('--watch', 'draw the report again each time the study file changes, until Ctrl-C')
    .action(async (dir: string, flags: { out?: string; watch?: boolean }) => {
      const stop = new AbortController();
      if (flags.watch) process.once('SIGINT', () => stop.abort());
      const said = (files: string[]): void => write(`wrote ${files.length} files; open ${files.find((f) => f.endsWith('report.html'))}\n`);
      const { files } = await plot({ dir, ...flags, signal: stop.signal, ...(flags.watch ? { onWritten: said } : {}) });
      if (!flags.watch) said(files);
    });

  program
    .command('compare')
    .description('answer the report\'s questions for several studies side by side')
    .argument('<dirs...>', 'two or more run directories')
    .option('--out <dir>', 'folder for the comparison report (default: <first dir>/comparison)')
    .action(async (dirs: string[], flags: { out?: string }) => {
      const { table, files } = await compare({ dirs, ...flags });
      write(`${table}\n\nopen ${files.find((f) => f.endsWith('report.html'))}\n`);
    });

  program
    .command('export')
    .description('write a ranked configuration with its preprocessing recipe and trained tfjs model')
    .argument('<dir>', 'run directory')
    .option('--rank <n>', 'rank in the study ranking', (v) => positiveInteger(v, '--rank'), 1)
    .option('--out <dir>', 'export folder (default: <dir>/export/rank-<n>)')
    .option('--retrain', 'train afresh on training + validation rows, then score once on the held-out test split')
    .action(async (dir: string, flags: { rank: number; out?: string; retrain?: boolean }) => {
      write(`${exportReport(await exportModel({ dir, ...flags }))}\n`);
    });

  program
    .command('predict')
    .description('apply an exported model to the rows of a CSV')
    .argument('<model>', 'export folder written by `rungwise export`')
    .argument('<data>', "CSV with the model's feature columns")
    .option('--output <file>', 'predictions CSV (default: <data>.predictions.csv beside the input)')
    .action(async (model: string, data: string, flags: { output?: string }) => {
      write(`${predictReport(await predict({ model, data, ...flags }))}\n`);
    });

  return program;
}

/** Runs the CLI; the only place that turns errors into exit codes. Returns the exit code. */
export async function main(argv: readonly string[]): Promise<number> {
  const debug = argv.includes('--debug');
  // Output piped into a command that stops reading (`| head`) is not an error: a study goes on.
  process.stdout.on('error', (error: NodeJS.ErrnoException) => {
    if (error.code !== 'EPIPE') throw error;
  });
  const program = buildProgram((text) => process.stdout.write(text));
  try {
    process.exitCode = undefined;
    await program.parseAsync([...argv]);
    return typeof process.exitCode === 'number' ? process.exitCode : 0;
  } catch (error) {
    if (error instanceof CommanderError) {
      // Help and version are "errors" with exit code 0; usage errors are user errors.
      return error.exitCode === 0 ? 0 : 2;
    }
    if (isUserError(error)) {
      // One line per problem, each marked, so every line can be read (and grepped) alone.
      process.stderr.write(error.message.split('\n').map((line) => `error: ${line}\n`).join(''));
      return error.exitCode;
    }
    const message = error instanceof Error ? error.message : String(error);
    process.stderr.write(`internal error: ${message}\n`);
    if (debug && error instanceof Error && error.stack) process.stderr.write(`${error.stack}\n`);
    else process.stderr.write('(run again with --debug for the stack)\n');
    return 1;
  }
}
