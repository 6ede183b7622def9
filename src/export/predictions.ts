import type { CsvTable } from '../data/csv.js';
import { argmaxRows } from '../train/metrics.js';
import type { ExportConfiguration } from './configuration.js';

/** One row of predictions: the input's CSV line, then the answer (and class probabilities for a classifier). */
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
 * Turns model outputs for the table's rows into prediction rows.
 * Classification: `line, predicted, p_<class>...` (binary: class 1 when its probability is at least 0.5,
 * as in the study's metrics). Regression: `line, predicted` in the target's units (the exported model
 * already answers in them).
 */
export function predictionTable(configuration: ExportConfiguration, input: CsvTable, outputs: Float32Array): PredictionTable {
  const { recipe } = configuration;
  const lines = input.lines;
  if (recipe.task === 'regression') {
    return { header: ['line', 'predicted'], rows: lines.map((line, r) => [String(line), String(outputs[r]!)]) };
  }
  const classes = recipe.classes ?? [];
  const header = ['line', 'predicted', ...classes.map((label) => `p_${label}`)];
  if (recipe.task === 'binary') {
    const rows = lines.map((line, r) => {
      const p = outputs[r]!;
      return [String(line), classes[p >= 0.5 ? 1 : 0]!, String(1 - p), String(p)];
    });
    return { header, rows };
  }
  const predicted = argmaxRows(outputs, classes.length);
  const rows = lines.map((line, r) => [
    String(line),
    classes[predicted[r]!]!,
    ...classes.map((_, c) => String(outputs[r * classes.length + c]!)),
  ]);
  return { header, rows };
}
