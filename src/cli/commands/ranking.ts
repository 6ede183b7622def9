import { type CommandDeclaration, newCommand } from '../command.js';
import { topFlag } from '../options.js';
import { printStudy } from '../study-output.js';

/** `rungwise ranking <dir>`: the ranking of a saved study. */
export const rankingCommand: CommandDeclaration = ({ program, io }) => {
  newCommand(program, 'ranking', [
    ['rungwise ranking runs/demo', 'the ten best as a table'],
    ['rungwise ranking runs/demo --top 3', 'the three best'],
    ['rungwise ranking runs/demo --json', 'every trial, unranked ones with the reason'],
  ])
    .description('print the ranking from a saved study file')
    .argument('<dir>', 'run directory')
    .option('--top <n>', 'configurations shown (default: 10 in the table, all in JSON)', topFlag)
    .option('--json', 'print JSON: every trial, ranked ones first, unranked ones with the reason')
    .action(async (dir: string, flags: { top?: number; json?: boolean }) => {
      const target = io();
      const { ranking } = await import('../../commands/ranking.js');
      const result = await ranking({ dir });
      if (!flags.json) {
        const { doc } = result;
        const { goalInWords } = await import('../../core/ranking.js');
        target.out(`study ${doc.name} (${doc.state}), ${doc.trials.length} trials, ranked by ${goalInWords(doc.goal)}\n\n`);
      }
      await printStudy(target, result, flags);
    });
};
