/**
 * The command line: declarations only. Every action loads its command module when it runs, so
 * `--help` and `--version` never load tfjs, the chart library or the runner.
 */
import { Command, CommanderError, InvalidArgumentError } from 'commander';
import { isUserError } from '../core/errors.js';
import { packageVersion } from '../files/package-files.js';
import { painterFor } from '../report/style.js';
import { COMMAND_EXAMPLES, PROGRAM_EXAMPLES } from './help.js';
import { interruptSignal } from './interrupt.js';
import { workerStopSignal } from './worker-signal.js';
import type { FaultInjector } from '../transports/threads/transport.js';

function wholeNumber(value: string, name: string): number {
  const parsed = Number(value);
  if (!Number.isInteger(parsed) || parsed < 0) throw new InvalidArgumentError(`${name} must be a whole number from 0 up, got '${value}'`);
  return parsed;
}

/** `--queue` and its companions, the same on `run` and `resume`. */
function queueOptions(command: Command): Command {
  return command
    .option('--queue <url>', 'serve the study over Redis to `rungwise worker` processes (redis://HOST:PORT/DB or rediss://)')
    .option('--threads <n>', 'with --queue: local threads training beside the workers (default 0)', (v) => wholeNumber(v, '--threads'))
    .option('--queue-wait-seconds <s>', 'with --queue: how long to wait for an unreachable Redis before saving and stopping (default 120)', (v) => positiveInteger(v, '--queue-wait-seconds'));
}

/** `--minutes` and `--cut-at-limit`, the same on `run` and `resume`. */
function limitOptions(command: Command): Command {
  return command
    .option('--minutes <m>', "minutes this session may start jobs, fractions allowed (default: the study's budget.minutes, else no limit)", positiveMinutes)
    .option('--cut-at-limit', 'at the time limit, cut running jobs off at their next epoch instead of letting them finish (they run again on resume)');
}

interface LimitFlagValues {
  minutes?: number;
  cutAtLimit?: boolean;
}

function positiveMinutes(value: string): number {
  const parsed = Number(value);
  if (value.trim() === '' || !Number.isFinite(parsed) || parsed <= 0) throw new InvalidArgumentError(`--minutes must be a number of minutes above 0 (fractions allowed), got '${value}'`);
  return parsed;
}

interface QueueFlagValues {
  queue?: string;
  threads?: number;
  queueWaitSeconds?: number;
}

/** The queue flags that were given, for the study commands. */
function queueFlags(flags: QueueFlagValues): QueueFlagValues {
  return {
    ...(flags.queue !== undefined ? { queue: flags.queue } : {}),
    ...(flags.threads !== undefined ? { threads: flags.threads } : {}),
    ...(flags.queueWaitSeconds !== undefined ? { queueWaitSeconds: flags.queueWaitSeconds } : {}),
  };
}

function positiveInteger(value: string, name: string): number {
  const parsed = Number(value);
  if (!Number.isInteger(parsed) || parsed < 1) throw new InvalidArgumentError(`${name} must be a whole number from 1 up, got '${value}'`);
  return parsed;
}

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

interface GlobalFlags {
  quiet?: boolean;
  debug?: boolean;
}

function ioFor(flags: GlobalFlags, stdout: NodeJS.WritableStream, stderr: NodeJS.WritableStream): CliIo {
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

/** Run a study command with Ctrl-C handling; an interrupted study says how to go on and exits 130. */
async function untilInterrupted<T extends { dir: string; doc: { state: string } }>(io: CliIo, command: (signal: AbortSignal) => Promise<T>): Promise<T | undefined> {
  const interrupt = interruptSignal();
  try {
    let outcome: T;
    try {
      outcome = await command(interrupt.signal);
    } catch (error) {
      // Interrupted while the data loaded: nothing was written yet.
      if (!interrupt.signal.aborted || (error as Error).name !== 'AbortError') throw error;
      io.warn('interrupted before the first trial; nothing was written');
      process.exitCode = 130;
      return undefined;
    }
    if (outcome.doc.state === 'interrupted') {
      io.warn(`study interrupted; continue it with: rungwise resume ${outcome.dir}`);
      process.exitCode = 130;
    }
    if (outcome.doc.state === 'time-limit') io.note(`study stopped by its time limit; continue it with: rungwise resume ${outcome.dir} --minutes <m>`);
    return outcome;
  } finally {
    interrupt.dispose();
  }
}

function json(value: unknown): string {
  return `${JSON.stringify(value, null, 2)}\n`;
}

/** Declares the commands and flags; each action calls one function of `src/commands`. */
/** What a test entry point may inject into the commands (never set by the shipped `bin/rungwise.js`). */
export interface CliInjections {
  /** Faults injected into trials (see `runner/faults.ts`). */
  faults?: FaultInjector;
}

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
  const io = (): CliIo => ioFor(program.opts<GlobalFlags>(), stdout, stderr);
  const top = (v: string): number => positiveInteger(v, '--top');
  const workers = (v: string): number => positiveInteger(v, '--workers');
  const command = (name: string): Command => program.command(name).addHelpText('after', COMMAND_EXAMPLES[name] ?? '');

  const printStudy = async (
    target: CliIo,
    outcome: { doc: import('../store/types.js').StudyDocument; ranking: import('../core/ranking.js').RankedTrial[]; file: string },
    flags: { top?: number; json?: boolean },
  ): Promise<void> => {
    const { studyResultJson, studyResultText } = await import('../report/study-result.js');
    target.out(flags.json ? json(studyResultJson(outcome.doc, outcome.ranking, outcome.file, flags.top)) : `${studyResultText(outcome.doc, outcome.ranking, outcome.file, flags.top)}\n`);
  };
  /** After a study ran: its result on stdout, then exit 1 when every trial ended without a score. */
  const finishStudy = async (target: CliIo, outcome: Parameters<typeof printStudy>[1], flags: { top?: number; json?: boolean }): Promise<void> => {
    await printStudy(target, outcome, flags);
    const { noResultError } = await import('../core/trial-status.js');
    const noResult = outcome.doc.state === 'finished' ? noResultError(outcome.doc.trials, outcome.file) : undefined;
    if (noResult) throw noResult;
  };

  command('run')
    .description('launch a study from its definition file')
    .argument('<definition>', 'study definition (JSON)')
    .option('--out <dir>', 'run directory (default: runs/<study name>)')
    .option('--workers <n>', "worker threads (default: the study's, else available cores)", workers)
    .option('--top <n>', 'configurations in the result (default: 10 in the table, all in JSON)', top)
    .option('--force', 'replace a run directory that already holds a study')
    .option('--json', 'print the result as JSON: every trial, ranked ones first')
    .action(async (definition: string, flags: { out?: string; workers?: number; top?: number; force?: boolean; json?: boolean } & QueueFlagValues & LimitFlagValues) => {
      const target = io();
      const { run } = await import('../commands/run.js');
      const { json: _json, top: _top, ...options } = flags;
      const outcome = await untilInterrupted(target, (signal) => run({ definition, ...options, ...inject, progress: target.err, onDataWarning: target.warn, signal }));
      if (outcome) await finishStudy(target, outcome, flags);
    });

  queueOptions(program.commands.at(-1)!);
  limitOptions(program.commands.at(-1)!);

  command('resume')
    .description('continue an interrupted study')
    .argument('<dir>', 'run directory')
    .option('--workers <n>', "worker threads (default: the study's, else available cores)", workers)
    .option('--top <n>', 'configurations in the result (default: 10 in the table, all in JSON)', top)
    .option('--json', 'print the result as JSON: every trial, ranked ones first')
    .option('--allow-changed-data', 'go on although the CSV changed since the study started (the study file records it)')
    .action(async (dir: string, flags: { workers?: number; top?: number; json?: boolean; allowChangedData?: boolean } & QueueFlagValues & LimitFlagValues) => {
      const target = io();
      const { resume } = await import('../commands/resume.js');
      const outcome = await untilInterrupted(target, (signal) =>
        resume({
          dir,
          ...inject,
          ...(flags.workers !== undefined ? { workers: flags.workers } : {}),
          ...(flags.allowChangedData ? { allowChangedData: true } : {}),
          ...(flags.minutes !== undefined ? { minutes: flags.minutes } : {}),
          ...(flags.cutAtLimit ? { cutAtLimit: true } : {}),
          ...queueFlags(flags),
          progress: target.err,
          onDataWarning: target.warn,
          signal,
        }),
      );
      if (outcome?.alreadyFinished) target.note(`study ${outcome.doc.name} is already finished; nothing to resume`);
      if (outcome) await finishStudy(target, outcome, flags);
    });

  queueOptions(program.commands.at(-1)!);
  limitOptions(program.commands.at(-1)!);

  command('worker')
    .description('train jobs of every study served on a Redis, until SIGINT or SIGTERM')
    .argument('<url>', 'redis://HOST:PORT/DB or rediss://HOST:PORT/DB (a password as redis://:PASSWORD@HOST...)')
    .option('--threads <n>', 'jobs trained at once (default: available cores)', (v) => positiveInteger(v, '--threads'))
    .option('--stall-seconds <s>', 'a job whose worker stops renewing its lock is taken back after this long (default 30)', (v) => positiveInteger(v, '--stall-seconds'))
    .action(async (url: string, flags: { threads?: number; stallSeconds?: number }) => {
      const { worker } = await import('../commands/worker.js');
      const stop = workerStopSignal();
      try {
        await worker({ url, ...flags, ...inject, signal: stop.signal });
      } finally {
        stop.dispose();
      }
    });

  command('ranking')
    .description('print the ranking from a saved study file')
    .argument('<dir>', 'run directory')
    .option('--top <n>', 'configurations shown (default: 10 in the table, all in JSON)', top)
    .option('--json', 'print JSON: every trial, ranked ones first, unranked ones with the reason')
    .action(async (dir: string, flags: { top?: number; json?: boolean }) => {
      const target = io();
      const { ranking } = await import('../commands/ranking.js');
      const result = await ranking({ dir });
      if (!flags.json) {
        const { doc } = result;
        const { goalInWords } = await import('../core/ranking.js');
        target.out(`study ${doc.name} (${doc.state}), ${doc.trials.length} trials, ranked by ${goalInWords(doc.goal)}\n\n`);
      }
      await printStudy(target, result, flags);
    });

  command('plot')
    .description('draw charts and an offline HTML report from a saved study file')
    .argument('<dir>', 'run directory')
    .option('--out <dir>', 'folder for the charts (default: <dir>/plots)')
    .option('--json', 'print the files written as JSON')
    .option('--watch', 'draw the report again each time the study file changes, until Ctrl-C')
    .action(async (dir: string, flags: { out?: string; json?: boolean; watch?: boolean }) => {
      const target = io();
      const { plot } = await import('../commands/plot.js');
      const stop = new AbortController();
      if (flags.watch) process.once('SIGINT', () => stop.abort());
      const reportOf = (files: string[]): string | null => files.find((f) => f.endsWith('report.html')) ?? null;
      const said = (files: string[]): void => {
        const report = reportOf(files);
        target.out(flags.json ? json({ report, files }) : `wrote ${files.length} files${report ? `; open ${report}` : ''}\n`);
      };
      const { files } = await plot({
        dir,
        ...(flags.out !== undefined ? { out: flags.out } : {}),
        signal: stop.signal,
        ...(flags.watch ? { watch: true, onWritten: said } : {}),
      });
      if (!flags.watch) said(files);
    });

  command('compare')
    .description("answer the report's questions for several studies side by side")
    .argument('<dirs...>', 'two or more run directories')
    .option('--out <dir>', 'folder for the comparison report (default: <first dir>/comparison)')
    .option('--json', 'print the comparison as JSON')
    .action(async (dirs: string[], flags: { out?: string; json?: boolean }) => {
      const target = io();
      const { compare } = await import('../commands/compare.js');
      const result = await compare({ dirs, ...(flags.out !== undefined ? { out: flags.out } : {}) });
      const report = result.files.find((f) => f.endsWith('report.html')) ?? null;
      target.out(flags.json ? json({ report, files: result.files }) : `${result.table}\n\nopen ${report}\n`);
    });

  command('export')
    .description('write a ranked configuration with its preprocessing recipe and trained model')
    .argument('<dir>', 'run directory')
    .option('--rank <n>', 'rank in the study ranking', (v) => positiveInteger(v, '--rank'), 1)
    .option('--out <dir>', 'export folder (default: <dir>/export/rank-<n>)')
    .option('--retrain', 'train afresh on training + validation rows, then score once on the held-out test split')
    .option('--format <format>', "'tfjs' (model.json, weights.bin) or 'onnx' (model.onnx as well)", 'tfjs')
    .option('--allow-changed-data', 'with --retrain: go on although the CSV changed since the study ran')
    .option('--json', 'print the export summary as JSON')
    .action(async (dir: string, flags: { rank: number; out?: string; retrain?: boolean; format: string; json?: boolean; allowChangedData?: boolean }) => {
      const target = io();
      const { exportModel, exportReport, parseExportFormat } = await import('../commands/export.js');
      const summary = await exportModel({
        dir,
        rank: flags.rank,
        format: parseExportFormat(flags.format),
        ...(flags.out !== undefined ? { out: flags.out } : {}),
        ...(flags.retrain ? { retrain: true } : {}),
        ...(flags.allowChangedData ? { allowChangedData: true } : {}),
      });
      target.out(flags.json ? json(summary) : `${exportReport(summary)}\n`);
    });

  command('predict')
    .description('apply an exported model to the rows of a CSV')
    .argument('<model>', 'export folder written by `rungwise export`')
    .argument('<data>', "CSV with the model's feature columns")
    .option('--output <file>', "predictions CSV, or '-' for stdout (default: <data>.predictions.csv beside the input)")
    .option('--keep <column...>', 'input columns to copy into the predictions (identifiers)')
    .option('--strict', 'an unseen or blank category or a missing number is an error (exit 2, nothing written) instead of a warning')
    .option('--json', 'print the summary as JSON (not with --output -)')
    .action(async (model: string, data: string, flags: { output?: string; keep?: string[]; strict?: boolean; json?: boolean }) => {
      const target = io();
      const { predictCsv, predictReport, predictWarnings, STDOUT } = await import('../commands/predict.js');
      if (flags.json && flags.output === STDOUT) {
        const { UserError } = await import('../core/errors.js');
        throw new UserError('E_USAGE', "predict: --json and --output - both write to stdout; choose one (the summary goes to stderr with --output -)");
      }
      const summary = await predictCsv({
        model,
        data,
        ...(flags.output !== undefined ? { output: flags.output } : {}),
        ...(flags.keep ? { keep: flags.keep } : {}),
        ...(flags.strict ? { strict: true } : {}),
        stdout,
      });
      for (const line of predictWarnings(summary, data)) target.warn(line);
      if (flags.json) target.out(json(summary));
      else if (summary.output === STDOUT) target.note(predictReport(summary));
      else target.out(`${predictReport(summary)}\n`);
    });

  command('demo')
    .description('run the demo study shipped with rungwise (invented pump-failure logs), or copy it to edit')
    .option('--out <dir>', 'run directory', 'runs/demo')
    .option('--copy <dir>', 'copy the demo definition and CSV into <dir> instead of running')
    .option('--workers <n>', 'worker threads (default: 2)', workers)
    .option('--top <n>', 'configurations in the result (default: 10 in the table, all in JSON)', top)
    .option('--json', 'print the result as JSON')
    .action(async (flags: { out: string; copy?: string; workers?: number; top?: number; json?: boolean }) => {
      const target = io();
      const { copyDemo, runDemo } = await import('../commands/demo.js');
      if (flags.copy !== undefined) {
        const files = await copyDemo(flags.copy);
        target.out(flags.json ? json({ files }) : `${files.join('\n')}\n`);
        target.note(`run it with: rungwise run ${files[0]}`);
        return;
      }
      const outcome = await untilInterrupted(target, (signal) =>
        runDemo({ out: flags.out, ...(flags.workers !== undefined ? { workers: flags.workers } : {}), progress: target.err, signal }),
      );
      if (outcome) await finishStudy(target, outcome, flags);
    });

  return program;
}

/** Runs the CLI; the only place that turns errors into exit codes. Returns the exit code. */
export async function main(argv: readonly string[], inject: CliInjections = {}): Promise<number> {
  const debug = argv.includes('--debug');
  // Output piped into a command that stops reading (`| head`) is not an error: a study goes on.
  process.stdout.on('error', (error: NodeJS.ErrnoException) => {
    if (error.code !== 'EPIPE') throw error;
  });
  const program = buildProgram(process.stdout, process.stderr, inject);
  const paint = painterFor(process.stderr);
  try {
    process.exitCode = undefined;
    await program.parseAsync([...argv]);
    return typeof process.exitCode === 'number' ? process.exitCode : 0;
  } catch (error) {
    if (error instanceof CommanderError) {
      // Help and version are "errors" with exit code 0; usage errors are user errors.
      return error.exitCode === 0 ? 0 : 2;
    }
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
}
