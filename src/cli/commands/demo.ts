import { type CommandDeclaration, newCommand } from '../command.js';
import { json } from '../io.js';
import { threadsFlag, type ThreadsFlagValues, threadsOptions, topFlag } from '../options.js';
import { finishStudy, untilInterrupted } from '../study-output.js';

/** `rungwise demo`: run the shipped demo study, or copy it to edit. */
export const demoCommand: CommandDeclaration = ({ program, io }) => {
  const command = newCommand(program, 'demo', [
    ['rungwise demo', 'run the shipped demo study into runs/demo (replacing an earlier demo run)'],
    ['rungwise demo --copy my-demo', 'copy the demo study and its CSV into my-demo/ to edit'],
  ])
    .description('run the demo study shipped with rungwise (invented pump-failure logs), or copy it to edit')
    .option('--out <dir>', 'run directory', 'runs/demo')
    .option('--copy <dir>', 'copy the demo definition and CSV into <dir> instead of running')
    .option('--top <n>', 'configurations in the result (default: 10 in the table, all in JSON)', topFlag)
    .option('--json', 'print the result as JSON')
    .action(async (flags: { out: string; copy?: string; top?: number; json?: boolean } & ThreadsFlagValues) => {
      const target = io();
      const { copyDemo, runDemo } = await import('../../commands/demo.js');
      if (flags.copy !== undefined) {
        const files = await copyDemo(flags.copy);
        target.out(flags.json ? json({ files }) : `${files.join('\n')}\n`);
        target.note(`run it with: rungwise run ${files[0]}`);
        return;
      }
      const outcome = await untilInterrupted(target, (signal) =>
        runDemo({ out: flags.out, ...threadsFlag(flags, target.note), progress: target.err, onWarning: target.warn, signal }),
      );
      if (outcome) await finishStudy(target, outcome, flags);
    });
  threadsOptions(command, 'default: 2');
};
