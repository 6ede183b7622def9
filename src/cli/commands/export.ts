import { type CommandDeclaration, newCommand } from '../command.js';
import { json } from '../io.js';
import { positiveInteger } from '../options.js';

/** `rungwise export <dir>`: a ranked configuration as a model folder. */
export const exportCommand: CommandDeclaration = ({ program, io }) => {
  newCommand(program, 'export', [
    ['rungwise export runs/demo', 'rank 1 as a tfjs model with its recipe'],
    ['rungwise export runs/demo --rank 2 --retrain', 'retrain on training + validation rows, score on the test split'],
    ['rungwise export runs/demo --format onnx', 'model.onnx beside the tfjs files'],
    ['rungwise export runs/demo --one-se-pick', 'the smallest network within one standard error of the best (repeat runs)'],
  ])
    .description('write a ranked configuration with its preprocessing recipe and trained model')
    .argument('<dir>', 'run directory')
    .option('--rank <n>', 'rank in the study ranking (default: 1)', (v) => positiveInteger(v, '--rank'))
    .option('--one-se-pick', 'take the one-standard-error pick of the repeat runs (the fewest weights within one standard error of the best mean) instead of a rank')
    .option('--out <dir>', 'export folder (default: <dir>/export/rank-<n>)')
    .option('--retrain', 'train afresh on training + validation rows, then score once on the held-out test split')
    .option('--format <format>', "'tfjs' (model.json, weights.bin) or 'onnx' (model.onnx as well)", 'tfjs')
    .option('--allow-changed-data', 'with --retrain: go on although the CSV changed since the study ran')
    .option('--json', 'print the export summary as JSON')
    .action(async (dir: string, flags: { rank?: number; oneSePick?: boolean; out?: string; retrain?: boolean; format: string; json?: boolean; allowChangedData?: boolean }) => {
      const target = io();
      const { exportModel, exportReport, parseExportFormat } = await import('../../commands/export.js');
      const summary = await exportModel({
        dir,
        ...(flags.rank !== undefined ? { rank: flags.rank } : {}),
        ...(flags.oneSePick ? { oneSePick: true } : {}),
        format: parseExportFormat(flags.format),
        ...(flags.out !== undefined ? { out: flags.out } : {}),
        ...(flags.retrain ? { retrain: true } : {}),
        ...(flags.allowChangedData ? { allowChangedData: true } : {}),
      });
      target.out(flags.json ? json(summary) : `${exportReport(summary)}\n`);
    });
};
