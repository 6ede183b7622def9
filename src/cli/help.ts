/** The Examples section every `--help` ends with: one command per line, each with what it does. */
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

export const COMMAND_EXAMPLES: Record<string, string> = {
  run: examples([
    ['rungwise run studies/demo/study.json --out runs/demo', 'progress on stderr, ranking on stdout'],
    ['rungwise run study.json --quiet --json > result.json', 'nothing but the result, as JSON'],
    ['rungwise run study.json --out runs/x --force --workers 2', 'replace an earlier run, two worker threads'],
    ['rungwise run study.json --minutes 20', 'start no job after 20 minutes; resume goes on'],
  ]),
  resume: examples([
    ['rungwise resume runs/demo', 'continue after Ctrl-C; finished trials are kept'],
    ['rungwise resume runs/demo --json --top 3', 'the three best as JSON when it ends'],
    ['rungwise resume runs/demo --minutes 30', 'after a time limit: 30 more minutes'],
  ]),
  ranking: examples([
    ['rungwise ranking runs/demo', 'the ten best as a table'],
    ['rungwise ranking runs/demo --top 3', 'the three best'],
    ['rungwise ranking runs/demo --json', 'every trial, unranked ones with the reason'],
  ]),
  plot: examples([
    ['rungwise plot runs/demo', 'SVG charts and runs/demo/plots/report.html'],
    ['rungwise plot runs/demo --out charts --json', 'into charts/, the list of files as JSON'],
  ]),
  export: examples([
    ['rungwise export runs/demo', 'rank 1 as a tfjs model with its recipe'],
    ['rungwise export runs/demo --rank 2 --retrain', 'retrain on training + validation rows, score on the test split'],
    ['rungwise export runs/demo --format onnx', 'model.onnx beside the tfjs files'],
  ]),
  predict: examples([
    ['rungwise predict runs/demo/export/rank-1 new.csv', 'writes new.predictions.csv beside the input'],
    ['rungwise predict runs/demo/export/rank-1 new.csv --keep pump_id --output -', 'CSV to stdout with the id column'],
    ['rungwise predict runs/demo/export/rank-1 new.csv --strict', 'refuse unseen or blank categories and missing numbers (warnings without it)'],
  ]),
  demo: examples([
    ['rungwise demo', 'run the shipped demo study into runs/demo (replacing an earlier demo run)'],
    ['rungwise demo --copy my-demo', 'copy the demo study and its CSV into my-demo/ to edit'],
  ]),
};
