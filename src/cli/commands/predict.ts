import { type CommandDeclaration, newCommand } from '../command.js';
import { json } from '../io.js';

/** `rungwise predict <model> <data>`: an exported model applied to a CSV. */
export const predictCommand: CommandDeclaration = ({ program, io, stdout }) => {
  newCommand(program, 'predict', [
    ['rungwise predict runs/demo/export/rank-1 new.csv', 'writes new.predictions.csv beside the input'],
    ['rungwise predict runs/demo/export/rank-1 new.csv --keep pump_id --output -', 'CSV to stdout with the id column'],
    ['rungwise predict runs/demo/export/rank-1 new.csv --strict', 'refuse unseen or blank categories and missing numbers (warnings without it)'],
  ])
    .description('apply an exported model to the rows of a CSV')
    .argument('<model>', 'export folder written by `rungwise export`')
    .argument('<data>', "CSV with the model's feature columns")
    .option('--output <file>', "predictions CSV, or '-' for stdout (default: <data>.predictions.csv beside the input)")
    .option('--keep <column...>', 'input columns to copy into the predictions (identifiers)')
    .option('--strict', 'an unseen or blank category or a missing number is an error (exit 2, nothing written) instead of a warning')
    .option('--json', 'print the summary as JSON (not with --output -)')
    .action(async (model: string, data: string, flags: { output?: string; keep?: string[]; strict?: boolean; json?: boolean }) => {
      const target = io();
      const { predictCsv, predictReport, predictWarnings, STDOUT } = await import('../../commands/predict.js');
      if (flags.json && flags.output === STDOUT) {
        const { UserError } = await import('../../core/errors.js');
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
      // The predictions are the result; the line saying where they went is a note (none under --quiet).
      if (flags.json) target.out(json(summary));
      else target.note(predictReport(summary));
    });
};
