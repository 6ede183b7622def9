/**
 * The fold networks of a k-fold trial as `export --average-folds` uses them: each built with its own
 * fold's recipe, its outputs on its own fold's validation rows (out-of-fold), those rows pooled into
 * one split, and the average's outputs on the test rows computed as `predict` computes them.
 */
import type { NamedWeights } from '../checkpoints/format.js';
import type { Goal } from '../core/configuration.js';
import type { RankedTrial } from '../core/ranking.js';
import { readCsv } from '../data/csv.js';
import { unscaleTarget } from '../data/recipe.js';
import type { PreparedData, PreprocessingRecipe, SplitArrays } from '../data/types.js';
import { studyCsvPath } from '../store/study-data.js';
import type { StudyDocument } from '../store/types.js';
import { goalScorer } from './ensemble.js';
import { encoderOfCells, weightedOutputs } from './hand-off.js';
import { buildLayersModel, predictRows } from './model-files.js';

/** The trial's fold networks, each with its recipe (fitted on its own training rows) and its weights. */
export interface FoldNetwork {
  fold: number;
  recipe: PreprocessingRecipe;
  weights: NamedWeights[];
  /** Its outputs on its own fold's validation rows (rows it did not train on). */
  outOfFold: Float32Array;
  /** The goal's metric of this network on those rows. */
  score: number;
}

/** Each fold network with its recipe, weights and outputs on its own fold's validation rows. */
export function foldNetworks(data: PreparedData, chosen: RankedTrial, weights: NamedWeights[][], goal: Goal): FoldNetwork[] {
  return data.folds!.map((fold, i) => {
    const network = buildLayersModel(chosen.trial.configuration, fold.recipe, weights[i]!);
    try {
      const outOfFold = predictRows(network, fold.validation.x, fold.validation.rows, fold.recipe.inputCount);
      const score = goalScorer(fold.recipe, fold.validation, goal, fold.costMatrix)(outOfFold);
      return { fold: i + 1, recipe: fold.recipe, weights: weights[i]!, outOfFold, score };
    } finally {
      network.dispose();
    }
  });
}

/**
 * Every fold's validation rows with their fold network's outputs, as one split under the export's
 * recipe (a regression target is unscaled with its fold's figures and scaled again with the export's).
 */
export function outOfFoldSplit(data: PreparedData, networks: readonly FoldNetwork[]): { split: SplitArrays; outputs: Float32Array } {
  const folds = data.folds!;
  const rows = folds.reduce((sum, fold) => sum + fold.validation.rows, 0);
  const y = new Float32Array(rows);
  const outputs = new Float32Array(networks.reduce((sum, network) => sum + network.outOfFold.length, 0));
  const scaling = data.recipe.targetScaling;
  let row = 0;
  let offset = 0;
  folds.forEach((fold, i) => {
    fold.validation.y.forEach((value, r) => {
      const target = unscaleTarget(fold.recipe, value);
      y[row + r] = scaling ? (target - scaling.mean) / scaling.std : value;
    });
    outputs.set(networks[i]!.outOfFold, offset);
    row += fold.validation.rows;
    offset += networks[i]!.outOfFold.length;
  });
  return { split: { rows, x: new Float32Array(0), y }, outputs };
}

/** The test rows as CSV cells, read again from the study's CSV by their line numbers: what `predict` would be given. */
async function testCells(doc: StudyDocument, data: PreparedData): Promise<{ cells: Record<string, string>[]; lines: number[]; file: string }> {
  const file = studyCsvPath(doc);
  const table = await readCsv(file);
  const wanted = new Set(data.test.lines ?? []);
  const cells: Record<string, string>[] = [];
  const lines: number[] = [];
  table.rows.forEach((row, r) => {
    if (!wanted.has(table.lines[r]!)) return;
    cells.push(row);
    lines.push(table.lines[r]!);
  });
  if (cells.length !== data.test.rows) throw new Error(`export --average-folds: found ${cells.length} of the ${data.test.rows} test rows in ${file}`);
  return { cells, lines, file };
}

/** The average's outputs on the test rows, computed as `predict` computes them: each fold network on the rows encoded under its own recipe. */
export async function averageOnTest(doc: StudyDocument, data: PreparedData, chosen: RankedTrial, networks: readonly FoldNetwork[]): Promise<Float32Array> {
  const { cells, lines, file } = await testCells(doc, data);
  const members = networks.map((network) => ({ network: buildLayersModel(chosen.trial.configuration, network.recipe, network.weights), weight: 1 / networks.length, recipe: network.recipe }));
  try {
    return weightedOutputs(members, data.recipe, new Float32Array(0), cells.length, encoderOfCells(cells, file, lines));
  } finally {
    for (const { network } of members) network.dispose();
  }
}
