import { type CommandDeclaration, newCommand } from '../command.js';
import { limitFlags, limitOptions, type LimitFlagValues, queueFlags, queueOptions, type QueueFlagValues, threadsFlag, type ThreadsFlagValues, threadsOptions, topFlag } from '../options.js';
import { finishStudy, untilInterrupted } from '../study-output.js';

/** `rungwise resume <dir>`: continue an interrupted study. */
export const resumeCommand: CommandDeclaration = ({ program, io, inject }) => {
  const command = newCommand(program, 'resume', [
    ['rungwise resume runs/demo', 'continue after Ctrl-C; finished trials are kept'],
    ['rungwise resume runs/demo --json --top 3', 'the three best as JSON when it ends'],
    ['rungwise resume runs/demo --minutes 30', 'after a time limit: 30 more minutes'],
  ])
    .description('continue an interrupted study')
    .argument('<dir>', 'run directory')
    .option('--top <n>', 'configurations in the result (default: 10 in the table, all in JSON)', topFlag)
    .option('--json', 'print the result as JSON: every trial, ranked ones first')
    .option('--allow-changed-data', 'go on although the CSV changed since the study started (the study file records it)')
    .action(async (dir: string, flags: { top?: number; json?: boolean; allowChangedData?: boolean } & ThreadsFlagValues & QueueFlagValues & LimitFlagValues) => {
      const target = io();
      const { resume } = await import('../../commands/resume.js');
      const outcome = await untilInterrupted(target, (signal) =>
        resume({
          dir,
          ...inject,
          ...threadsFlag(flags, target.note),
          ...(flags.allowChangedData ? { allowChangedData: true } : {}),
          ...queueFlags(flags),
          ...limitFlags(flags),
          progress: target.err,
          onDataWarning: target.warn,
          onWarning: target.warn,
          signal,
        }),
      );
      if (outcome?.alreadyFinished) target.note(`study ${outcome.doc.name} is already finished; nothing to resume`);
      if (outcome) await finishStudy(target, outcome, flags);
    });
  threadsOptions(command, "default: the study's threads, else available cores; with --queue: 0");
  queueOptions(command);
  limitOptions(command);
};
