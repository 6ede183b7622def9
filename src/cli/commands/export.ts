import { type CommandDeclaration, newCommand } from '../command.js';
import { json } from '../io.js';
import { positiveInteger } from '../options.js';

/** `rungwise export <dir>`: a ranked configuration as a model folder. */
export const exportCommand: CommandDeclaration = ({ program, io }) => {
  newCommand(program, 'export', [
    ['rungwise export runs/demo', "rank 1: the study's own network with its recipe, scored on the test split"],
    ['rungwise export runs/demo --rank 2 --retrain', 'retrain on training + validation rows, score on the test split'],
    ['rungwise export runs/demo --format onnx', 'model.onnx beside the tfjs files'],
    ['rungwise export runs/demo --max-weights 2000', 'the best configuration of at most 2,000 weights on the front'],
    ['rungwise export runs/demo --ensemble 3', 'an ensemble chosen from ranks 1 to 3, scored beside rank 1 on the test split'],
    ['rungwise export runs/folds --average-folds', "a k-fold study: rank 1's fold networks averaged, scored beside the retrained network on the test split"],
    ['rungwise export runs/demo --one-se-pick', 'the smallest network within one standard error of the best (repeat runs)'],
  ])
    .description('write a ranked configuration with its preprocessing recipe and trained model')
    .argument('<dir>', 'run directory')
    .option('--rank <n>', 'rank in the study ranking (default: 1)', (v) => positiveInteger(v, '--rank'))
    .option('--front <place>', "place on the study's front (footprint.against), 1 = the smallest or fastest", (v) => positiveInteger(v, '--front'))
    .option('--max-weights <n>', 'the front configuration with the most weights at most n (the best score within that size)', (v) => positiveInteger(v, '--max-weights'))
    .option('--one-se-pick', 'take the one-standard-error pick of the repeat runs (the fewest weights within one standard error of the best mean) instead of a rank')
    .option('--out <dir>', 'export folder (default: <dir>/export/rank-<n>)')
    .option('--retrain', "train afresh on training + validation rows for the study's optimizer steps, then score it and the study's network on the held-out test split")
    .option('--format <format>', "'tfjs' (model.json, weights.bin) or 'onnx' (model.onnx as well)", 'tfjs')
    .option('--ensemble <k>', 'greedy ensemble selection over ranks 1 to k on the validation split; the ensemble and rank 1 scored on the test split', (v) => positiveInteger(v, '--ensemble'))
    .option('--average-folds', "a k-fold study: the chosen trial's fold networks averaged as one model; it and the retrained single network scored on the test split")
    .option('--allow-changed-data', 'go on although the CSV changed since the study ran (the test score is then on the changed data)')
    .option('--json', 'print the export summary as JSON')
    .action(async (dir: string, flags: { rank?: number; front?: number; maxWeights?: number; oneSePick?: boolean; out?: string; retrain?: boolean; format: string; json?: boolean; allowChangedData?: boolean; ensemble?: number; averageFolds?: boolean }) => {
      const target = io();
      if (flags.averageFolds) {
        const { exportFoldAverageAction, foldAverageReport } = await import('../../commands/export-folds.js');
        const summary = await exportFoldAverageAction(dir, flags);
        target.out(flags.json ? json(summary) : `${foldAverageReport(summary)}\n`);
        return;
      }
      if (flags.ensemble !== undefined) {
        const { exportEnsembleAction, ensembleReport } = await import('../../commands/export-ensemble.js');
        const summary = await exportEnsembleAction(dir, { ...flags, ensemble: flags.ensemble });
        target.out(flags.json ? json(summary) : `${ensembleReport(summary)}\n`);
        return;
      }
      const { exportModel, exportReport, parseExportFormat } = await import('../../commands/export.js');
      const summary = await exportModel({
        dir,
        ...(flags.rank !== undefined ? { rank: flags.rank } : {}),
        ...(flags.front !== undefined ? { front: flags.front } : {}),
        ...(flags.maxWeights !== undefined ? { maxWeights: flags.maxWeights } : {}),
        ...(flags.oneSePick ? { oneSePick: true } : {}),
        format: parseExportFormat(flags.format),
        ...(flags.out !== undefined ? { out: flags.out } : {}),
        ...(flags.retrain ? { retrain: true } : {}),
        ...(flags.allowChangedData ? { allowChangedData: true } : {}),
      });
      target.out(flags.json ? json(summary) : `${exportReport(summary)}\n`);
    });
};
