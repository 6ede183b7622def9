import type { CsvTable } from '../data/csv.js';
import type { ExportConfiguration } from './configuration.js';
import type { Prediction } from './hand-off.js';

/** Predictions as CSV cells: the input's CSV line, the kept columns, then the answer (and class probabilities). */
export interface PredictionTable {
  header: string[];
  rows: string[][];
}

function csvCell(value: string): string {
  return /[",\r\n]/.test(value) ? `"${value.replaceAll('"', '""')}"` : value;
}

export function predictionsCsv(table: PredictionTable): string {
  return [table.header, ...table.rows].map((row) => row.map(csvCell).join(',')).join('\n') + '\n';
}

/**
 * One row per input row: `line, <kept columns>, predicted` and, for a classifier, `p_<class>` per class.
 * Regression answers are in the target's units; a binary class follows the model's decision threshold.
 */
export function predictionTable(configuration: ExportConfiguration, input: CsvTable, predictions: readonly Prediction[], keep: readonly string[] = []): PredictionTable {
  const classes = configuration.recipe.task === 'regression' ? [] : (configuration.recipe.classes ?? []);
  const header = ['line', ...keep, 'predicted', ...classes.map((label) => `p_${label}`)];
  const rows = predictions.map((prediction, r) => {
    const kept = keep.map((column) => input.rows[r]![column] ?? '');
    const answer = [String(prediction.predicted)];
    if ('probabilities' in prediction) for (const label of classes) answer.push(String(prediction.probabilities[label]));
    return [String(input.lines[r]), ...kept, ...answer];
  });
  return { header, rows };
}
