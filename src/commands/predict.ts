import path from 'node:path';
import { readCsv } from '../data/csv.js';
import { writeFileDurably } from '../files/durable-write.js';
import { UserError } from '../core/errors.js';
import { inputIssueWarning, strictInputError, type InputIssue } from '../data/input-checks.js';
import { decisionThreshold, encodeRowsChecked, encoderOfCells, interpretOutputs, loadModel, modelOutputs } from '../export/hand-off.js';
import { predictionTable, predictionsCsv } from '../export/predictions.js';
import type { Task } from '../core/configuration.js';
import { didYouMean } from '../text/nearest.js';

/** `--output -`: the predictions go to standard output. */
export const STDOUT = '-';

export interface PredictCommandOptions {
  /** An export folder written by `rungwise export`. */
  model: string;
  /** CSV with (at least) the model's feature columns; other columns, the target included, are ignored. */
  data: string;
  /** Predictions CSV, or `-` for standard output. @default `<data without .csv>.predictions.csv` beside the input */
  output?: string;
  /** Input columns copied into the predictions (identifiers), after the line number. */
  keep?: readonly string[];
  /** Where `--output -` writes. @default process.stdout */
  stdout?: NodeJS.WritableStream;
  /** `--strict`: an unseen or blank category or a missing number is an error (nothing is written). @default false */
  strict?: boolean;
}

export interface PredictSummary {
  /** The predictions file written, or `-` for standard output. */
  output: string;
  rows: number;
  task: Task;
  header: string[];
  /** The decision threshold applied (binary only). */
  threshold?: number;
  /** Unseen and blank categories and missing numbers met, one entry per column and kind, with a count and the first line. */
  inputIssues: InputIssue[];
}

/** `<folder>/<name>.predictions.csv` for `<folder>/<name>.csv`. */
export function defaultPredictionsPath(data: string): string {
  const parsed = path.parse(data);
  const stem = parsed.ext.toLowerCase() === '.csv' ? parsed.name : parsed.base;
  return path.join(parsed.dir, `${stem}.predictions.csv`);
}

/**
 * `rungwise predict`: applies an exported model to a CSV. Each row is encoded with the export's
 * recipe (missing values imputed as the recipe says, an unseen category as all zeros); the predictions
 * are written atomically (or to standard output), one row per input row with its CSV line number and
 * the kept columns. What was filled in or could not be placed comes back as `inputIssues` (the CLI
 * warns with {@link predictWarnings}); with `strict` any of it is an error and nothing is written.
 * @throws UserError when the folder is not an export, a kept column is absent, or the CSV lacks a feature column or holds text in a numeric one; with `strict`, naming the first line with an issue (E_PREDICT_STRICT).
 * @example
 * import { predictCsv } from 'rungwise';
 * await predictCsv({ model: 'runs/demo/export/rank-1', data: 'new-logs.csv', keep: ['pump_id'], output: 'predictions.csv' });
 */
export async function predictCsv(options: PredictCommandOptions): Promise<PredictSummary> {
  const output = options.output ?? defaultPredictionsPath(options.data);
  if (output !== STDOUT && path.resolve(output) === path.resolve(options.data)) {
    throw new UserError('E_PREDICT_OUTPUT', `${output}: is the input CSV itself; choose another --output`);
  }
  const model = await loadModel(options.model);
  try {
    const { configuration } = model;
    const table = await readCsv(options.data);
    const keep = [...new Set(options.keep ?? [])];
    for (const column of keep) {
      if (!table.columns.includes(column)) {
        throw new UserError('E_PREDICT_KEEP', `${table.file}: --keep ${column}: no such column${didYouMean(column, table.columns)} (columns: ${table.columns.join(', ')})`);
      }
    }
    const { x, issues } = encodeRowsChecked(configuration, table.rows, table.file, table.lines);
    if (options.strict && issues.length > 0) throw strictInputError(issues, table.file, '--strict', '; nothing was written');
    const outputs = modelOutputs(model, x, table.rows.length, encoderOfCells(table.rows, table.file, table.lines));
    const predictions = interpretOutputs(configuration, outputs, table.rows.length);
    const result = predictionTable(configuration, table, predictions, keep);
    const csv = predictionsCsv(result);
    if (output === STDOUT) (options.stdout ?? process.stdout).write(csv);
    else await writeFileDurably(output, csv);
    const summary: PredictSummary = { output, rows: table.rows.length, task: configuration.recipe.task, header: result.header, inputIssues: issues };
    if (configuration.recipe.task === 'binary') summary.threshold = decisionThreshold(configuration);
    return summary;
  } finally {
    model.dispose();
  }
}

/** What the CLI prints after predicting into a file. */
export function predictReport(summary: PredictSummary): string {
  const where = summary.output === STDOUT ? 'standard output' : summary.output;
  const threshold = summary.threshold === undefined ? '' : `; decision threshold ${Number(summary.threshold.toPrecision(4))} (from the export)`;
  return `wrote ${summary.rows} prediction${summary.rows === 1 ? '' : 's'} (${summary.header.join(', ')}) to ${where}${threshold}`;
}

/** The warnings the CLI prints after predicting: one line per column and kind, with the count and the first line. */
export function predictWarnings(summary: PredictSummary, data: string): string[] {
  return summary.inputIssues.map((issue) => inputIssueWarning(issue, data));
}
