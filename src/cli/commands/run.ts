import { type CommandDeclaration, newCommand } from '../command.js';
import { limitOptions, type LimitFlagValues, queueOptions, type QueueFlagValues, topFlag, workersFlag } from '../options.js';
import { finishStudy, untilInterrupted } from '../study-output.js';

/** `rungwise run <definition>`: launch a study. */
export const runCommand: CommandDeclaration = ({ program, io, inject }) => {
  const command = newCommand(program, 'run', [
    ['rungwise run studies/demo/study.json --out runs/demo', 'progress on stderr, ranking on stdout'],
    ['rungwise run study.json --quiet --json > result.json', 'nothing but the result, as JSON'],
    ['rungwise run study.json --out runs/x --force --workers 2', 'replace an earlier run, two worker threads'],
    ['rungwise run study.json --minutes 20', 'start no job after 20 minutes; resume goes on'],
  ])
    .description('launch a study from its definition file')
    .argument('<definition>', 'study definition (JSON)')
    .option('--out <dir>', 'run directory (default: runs/<study name>)')
    .option('--workers <n>', "worker threads (default: the study's, else available cores)", workersFlag)
    .option('--top <n>', 'configurations in the result (default: 10 in the table, all in JSON)', topFlag)
    .option('--force', 'replace a run directory that already holds a study')
    .option('--json', 'print the result as JSON: every trial, ranked ones first')
    .action(async (definition: string, flags: { out?: string; workers?: number; top?: number; force?: boolean; json?: boolean } & QueueFlagValues & LimitFlagValues) => {
      const target = io();
      const { run } = await import('../../commands/run.js');
      const { json: _json, top: _top, ...options } = flags;
      const outcome = await untilInterrupted(target, (signal) => run({ definition, ...options, ...inject, progress: target.err, onDataWarning: target.warn, onWarning: target.warn, signal }));
      if (outcome) await finishStudy(target, outcome, flags);
    });
  queueOptions(command);
  limitOptions(command);
};
