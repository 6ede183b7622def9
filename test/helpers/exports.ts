/** The three tiny studies (binary, multiclass, regression) run and their winners exported, for hand-off tests. */
import { mkdtemp } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import * as ort from 'onnxruntime-node';
import { exportModel, type ExportFormat } from '../../src/commands/export.js';
import { run } from '../../src/commands/run.js';
import type { Task } from '../../src/core/configuration.js';
import { isMissing, type CsvTable } from '../../src/data/csv.js';
import type { PreprocessingRecipe } from '../../src/data/types.js';
import { rawInputCount } from '../../src/data/recipe.js';

const TINY = fileURLToPath(new URL('../../studies/tiny/', import.meta.url));

export interface TinyExport {
  task: Task;
  /** The study's CSV. */
  csv: string;
  /** The export folder of rank 1. */
  exportDir: string;
}

/** The tiny studies of `studies/tiny`, one per task: the task, the definition's file name and its CSV's. */
export const TINY_STUDIES: readonly [Task, string, string][] = [
  ['binary', 'study.json', 'tiny.csv'],
  ['multiclass', 'study-multiclass.json', 'tiny-multiclass.csv'],
  ['regression', 'study-regression.json', 'tiny-regression.csv'],
];

/** Runs each tiny study (4 trials, 3 epochs) into a temporary folder and exports its best trial. */
export async function exportTinyStudies(format: ExportFormat = 'tfjs'): Promise<TinyExport[]> {
  const root = await mkdtemp(path.join(tmpdir(), 'rungwise-hand-off-'));
  const exports: TinyExport[] = [];
  for (const [task, definition, csv] of TINY_STUDIES) {
    const out = path.join(root, task);
    await run({ definition: path.join(TINY, definition), out, progress: false });
    const summary = await exportModel({ dir: out, format });
    exports.push({ task, csv: path.join(TINY, csv), exportDir: summary.out });
  }
  return exports;
}

/**
 * The inputs `model.onnx` documents (one per numeric column, before any numeric encoding, which the
 * graph applies), built from the CSV without rungwise's encoder: numbers as written
 * (NaN where missing), categories one-hot (the fill category where missing), pooled and unseen ones on
 * `column=(pooled)` when the column pools. With `missingCategory` 'nan', a missing category is NaN in
 * each of its column's inputs instead (the graph takes the fill category; each fold network its own).
 */
export function onnxInputs(recipe: PreprocessingRecipe, table: CsvTable, missingCategory: 'fill' | 'nan' = 'fill'): Float32Array {
  const width = rawInputCount(recipe);
  const x = new Float32Array(table.rows.length * width);
  table.rows.forEach((row, r) => {
    let offset = r * width;
    for (const feature of recipe.features) {
      const value = row[feature.name] ?? '';
      if (feature.kind === 'numeric') x[offset++] = isMissing(value) ? Number.NaN : Number(value);
      else if (missingCategory === 'nan' && isMissing(value)) {
        for (let i = 0; i < feature.categories.length + (feature.pooled ? 1 : 0); i++) x[offset++] = Number.NaN;
      } else {
        const category = isMissing(value) ? feature.fill : value;
        for (const known of feature.categories) x[offset++] = known === category ? 1 : 0;
        if (feature.pooled) x[offset++] = feature.categories.includes(category) ? 0 : 1;
      }
    }
  });
  return x;
}

/** `model.onnx` (a file or its bytes) run by onnxruntime on `rows` rows of `columns` documented inputs: its `output`. */
export async function runOnnx(model: string | Uint8Array, x: Float32Array, rows: number, columns: number): Promise<Float32Array> {
  const session = typeof model === 'string' ? await ort.InferenceSession.create(model) : await ort.InferenceSession.create(model);
  try {
    const result = await session.run({ features: new ort.Tensor('float32', x, [rows, columns]) });
    return result.output!.data as Float32Array;
  } finally {
    await session.release();
  }
}
