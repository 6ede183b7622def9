/** The Examples section every `--help` ends with: one command per line, each with what it does. Each command's own are beside it in `commands/`. */
export function examples(lines: readonly [command: string, what: string][]): string {
  const width = Math.max(...lines.map(([command]) => command.length));
  return `\nExamples:\n${lines.map(([command, what]) => `  ${command.padEnd(width)}  # ${what}`).join('\n')}\n`;
}

export const PROGRAM_EXAMPLES = examples([
  ['rungwise demo', 'run the shipped demo study into runs/demo'],
  ['rungwise run study.json --out runs/pumps', 'search, show progress on stderr, print the ranking'],
  ['rungwise ranking runs/pumps --json', 'every trial as JSON, failed and diverged ones marked'],
  ['rungwise export runs/pumps --format onnx', 'the winner as model.onnx for other stacks'],
  ['rungwise predict runs/pumps/export/rank-1 new.csv --keep id --output -', 'predictions to stdout'],
]);
