import { existsSync } from 'node:fs';
import path from 'node:path';
import { writeFileDurably } from '../files/durable-write.js';
import { readCsv } from '../data/csv.js';
import { encodeFeatures } from '../data/recipe.js';
import { UserError } from '../errors.js';
import { readConfiguration } from '../export/configuration.js';
import { MODEL_FILE, loadLayersModelFromDir, predictRows } from '../export/model-files.js';
import { predictionTable, predictionsCsv } from '../export/predictions.js';
import type { Task } from '../study/definition.js';
import { initBackend } from '../train/backend.js';

export interface PredictCommandOptions {
  /** An export folder written by `rungwise export`. */
  model: string;
  /** CSV with (at least) the model's feature columns; other columns, the target included, are ignored. */
  data: string;
  /** Predictions CSV. @default `<data without .csv>.predictions.csv` beside the input */
  output?: string;
}

export interface PredictSummary {
  /** The predictions file written. */
  output: string;
  rows: number;
  task: Task;
  header: string[];
}

/** `<folder>/<name>.predictions.csv` for `<folder>/<name>.csv`. */
export function defaultPredictionsPath(data: string): string {
  const parsed = path.parse(data);
  const stem = parsed.ext.toLowerCase() === '.csv' ? parsed.name : parsed.base;
  return path.join(parsed.dir, `${stem}.predictions.csv`);
}

/**
 * `rungwise predict`: applies an exported model to a CSV. Each row is encoded with the export's
 * recipe (missing values imputed as the recipe says, an unseen category as all zeros) and the
 * predictions are written atomically, one row per input row with its CSV line number.
 * @throws UserError when the folder is not an export, or the CSV lacks a feature column or holds text in a numeric one.
 */
export async function predict(options: PredictCommandOptions): Promise<PredictSummary> {
  const configuration = await readConfiguration(options.model);
  const modelFile = path.join(options.model, MODEL_FILE);
  if (!existsSync(modelFile)) throw new UserError('E_MODEL', `${modelFile}: not found; export the model again with \`rungwise export\``);
  const output = options.output ?? defaultPredictionsPath(options.data);
  if (path.resolve(output) === path.resolve(options.data)) {
    throw new UserError('E_PREDICT_OUTPUT', `${output}: is the input CSV itself; choose another --output`);
  }
  const table = await readCsv(options.data);
  const { recipe } = configuration;
  const x = encodeFeatures(recipe, table.rows, table.file, table.lines);

  await initBackend();
  const model = await loadLayersModelFromDir(options.model);
  let outputs: Float32Array;
  try {
    outputs = predictRows(model, x, table.rows.length, recipe.inputCount);
  } finally {
    model.dispose();
  }
  const predictions = predictionTable(configuration, table, outputs);
  await writeFileDurably(output, predictionsCsv(predictions));
  return { output, rows: table.rows.length, task: recipe.task, header: predictions.header };
}

/** What the CLI prints after predicting. */
export function predictReport(summary: PredictSummary): string {
  return `wrote ${summary.rows} prediction${summary.rows === 1 ? '' : 's'} (${summary.header.join(', ')}) to ${summary.output}`;
}
