import { type CommandDeclaration, newCommand } from '../command.js';
import { json } from '../io.js';

/** `rungwise plot <dir>`: charts and the HTML report of a saved study. */
export const plotCommand: CommandDeclaration = ({ program, io }) => {
  newCommand(program, 'plot', [
    ['rungwise plot runs/demo', 'SVG charts and runs/demo/plots/report.html'],
    ['rungwise plot runs/demo --out charts --json', 'into charts/, the list of files as JSON'],
  ])
    .description('draw charts and an offline HTML report from a saved study file')
    .argument('<dir>', 'run directory')
    .option('--out <dir>', 'folder for the charts (default: <dir>/plots)')
    .option('--json', 'print the files written as JSON')
    .option('--watch', 'draw the report again each time the study file changes, until Ctrl-C')
    .action(async (dir: string, flags: { out?: string; json?: boolean; watch?: boolean }) => {
      const target = io();
      const { plot } = await import('../../commands/plot.js');
      const stop = new AbortController();
      // Ctrl-C is how --watch ends; like every command stopped by it, the exit code is 130.
      const onInterrupt = (): void => stop.abort();
      if (flags.watch) process.once('SIGINT', onInterrupt);
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
      process.off('SIGINT', onInterrupt);
      if (!flags.watch) said(files);
      else if (stop.signal.aborted) process.exitCode = 130;
    });
};
