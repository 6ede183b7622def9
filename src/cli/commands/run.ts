import { InvalidArgumentError } from 'commander';
import { TASKS, type Task } from '../../core/configuration.js';
import { type CommandDeclaration, newCommand } from '../command.js';
import { limitOptions, type LimitFlagValues, positiveInteger, queueOptions, type QueueFlagValues, threadsFlag, type ThreadsFlagValues, threadsOptions, topFlag, wholeNumber } from '../options.js';
import { finishStudy, untilInterrupted } from '../study-output.js';

/** `rungwise run <definition>`: launch a study. */
export const runCommand: CommandDeclaration = ({ program, io, inject }) => {
  const command = newCommand(program, 'run', [
    ['rungwise run pumps.csv --target fails', 'a study from a CSV and its target: rungwise picks the rest'],
    ['rungwise run studies/demo/study.json --out runs/demo', 'progress on stderr, ranking on stdout'],
    ['rungwise run study.json --quiet --json > result.json', 'nothing but the result, as JSON'],
    ['rungwise run study.json --out runs/x --force --threads 2', 'replace an earlier run, two threads'],
    ['rungwise run study.json --minutes 20', 'start no job after 20 minutes; resume goes on'],
  ])
    .description('launch a study from its definition file, or from a CSV and its target column')
    .argument('<definition>', 'study definition (JSON), or a CSV file with --target')
    .option('--target <column>', 'with a CSV: the column to predict; rungwise infers the task and defines the search space, budget and sampler')
    .option('--task <task>', 'with --target: binary, multiclass or regression, when the target leaves it ambiguous', taskName)
    .option('--split-seed <n>', 'with --target: seed of the train/validation/test split (default 0)', (v) => wholeNumber(v, '--split-seed'))
    .option('--trials <n>', 'with --target: configurations to try, in place of the default budget (with --max-epochs)', (v) => positiveInteger(v, '--trials'))
    .option('--max-epochs <n>', 'with --target: epochs per configuration at most, in place of the default budget (with --trials)', (v) => positiveInteger(v, '--max-epochs'))
    .option('--out <dir>', 'run directory (default: runs/<study name>)')
    .option('--top <n>', 'configurations in the result (default: 10 in the table, all in JSON)', topFlag)
    .option('--force', 'replace a run directory that already holds a study')
    .option('--json', 'print the result as JSON: every trial, ranked ones first')
    .action(async (definition: string, flags: { out?: string; top?: number; force?: boolean; json?: boolean; target?: string; task?: Task; splitSeed?: number; trials?: number; maxEpochs?: number } & ThreadsFlagValues & QueueFlagValues & LimitFlagValues) => {
      const target = io();
      const { run } = await import('../../commands/run.js');
      const { json: _json, top: _top, workers: _workers, threads: _threads, ...options } = flags;
      const outcome = await untilInterrupted(target, (signal) => run({ definition, ...options, ...threadsFlag(flags, target.note), ...inject, progress: target.err, onDataWarning: target.warn, onWarning: target.warn, signal }));
      if (outcome) await finishStudy(target, outcome, flags);
    });
  threadsOptions(command, "default: the study's threads, else available cores; with --queue: 0");
  queueOptions(command);
  limitOptions(command);
};

/** `--task <task>`: one of the tasks. */
function taskName(value: string): Task {
  const task = TASKS.find((name) => name === value);
  if (!task) throw new InvalidArgumentError(`--task must be one of ${TASKS.join(', ')}, got '${value}'`);
  return task;
}
