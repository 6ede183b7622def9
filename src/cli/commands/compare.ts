import { type CommandDeclaration, newCommand } from '../command.js';
import { json } from '../io.js';

/** `rungwise compare <dirs...>`: several studies side by side. */
export const compareCommand: CommandDeclaration = ({ program, io }) => {
  newCommand(program, 'compare', [
    ['rungwise compare runs/random runs/hyperband', 'one row per question, one column per study; report in runs/random/comparison'],
    ['rungwise compare runs/a runs/b runs/c --out cmp --details', 'three studies, every answer in full, the report into cmp/'],
    ['rungwise compare runs/a runs/b --json', 'the answers per study as JSON, with the report path'],
  ])
    .description("answer the report's questions for several studies side by side")
    .argument('<dirs...>', 'two or more run directories')
    .option('--out <dir>', 'folder for the comparison report (default: <first dir>/comparison)')
    .option('--details', 'after the table, every answer in full')
    .option('--json', 'print the comparison as JSON: every answer of every study, and the report')
    .action(async (dirs: string[], flags: { out?: string; details?: boolean; json?: boolean }) => {
      const target = io();
      const { compare } = await import('../../commands/compare.js');
      const result = await compare({ dirs, ...(flags.out !== undefined ? { out: flags.out } : {}) });
      const report = result.files.find((f) => f.endsWith('report.html')) ?? null;
      if (flags.json) {
        target.out(json({ report, files: result.files, goal: result.goal, studies: result.studies }));
        return;
      }
      const details = flags.details ? `\n\n${result.details}` : '\n(--details gives every answer in full)';
      target.out(`${result.table}${details}\n\nopen ${report}\n`);
    });
};
