import type { PreprocessingChoice, Task } from '../core/configuration.js';
import type { NumericTransform } from './numeric-inputs.js';
import type { NumericEncodingFit } from './numeric-encodings.js';

/** How one input column becomes model inputs; every statistic comes from the training split only. */
export type FeatureRecipe =
  | {
      kind: 'numeric';
      name: string;
      /** Training-split mean, used for centring and to fill missing values. */
      mean: number;
      /** Training-split standard deviation (population); 1 when the column is constant. */
      std: number;
      /** With `numericInputs` other than standardise: the transform applied instead of (x - mean) / std (missing values still take the mean first). */
      transform?: NumericTransform;
      /** With `numericEncoding` other than none: the scaled value becomes several inputs (src/data/numeric-encodings.ts). */
      encoding?: NumericEncodingFit;
    }
  | {
      kind: 'categorical';
      name: string;
      /** Categories seen in the training split, in sorted order: one input each. An unseen one encodes as all zeros. */
      categories: string[];
      /** Most frequent training category, used for missing values. */
      fill: string;
      /**
       * With `poolCategoriesBelow`: the training categories seen in fewer rows than that, which share one
       * input after `categories` (so do categories unseen in training). Absent, or no category was that rare: no pooled input.
       */
      pooled?: string[];
    };

/** Everything needed to turn a raw CSV row into model inputs, and model outputs back into answers. */
export interface PreprocessingRecipe {
  task: Task;
  target: string;
  features: FeatureRecipe[];
  /** Number of network inputs after one-hot encoding and any numeric encoding (`rawInputCount` in recipe.ts: the inputs before it). */
  inputCount: number;
  /** Class labels in output order (classification only). */
  classes?: string[];
  /** Training-split mean and standard deviation of the target (regression only): the network learns the standardised target. */
  targetScaling?: { mean: number; std: number };
}

/** One split as dense row-major matrices. `y` holds a class index (classification) or the standardised target (regression). */
export interface SplitArrays {
  rows: number;
  /** rows x inputCount, row-major. */
  x: Float32Array;
  /** rows values. */
  y: Float32Array;
  /** 1-based CSV line number of each row (header is line 1), for messages and predictions. */
  lines?: Int32Array;
}

/** The prepared data set: built once in the main thread, shared with workers through SharedArrayBuffers. */
export interface PreparedData {
  recipe: PreprocessingRecipe;
  train: SplitArrays;
  validation: SplitArrays;
  /** Held out: used only by `export --retrain` for the final check. */
  test: SplitArrays;
  /** The training loss's weight per class index (`data.classWeights`, from the training rows); absent: all rows weigh the same. */
  classWeights?: number[];
  /** `data.costs` as `[actual][predicted]` by class index (src/data/costs.ts); absent without costs. */
  costMatrix?: number[][];
  /** 0-based data-row indices (row 0 = the first line after the header) of each split, ascending; what `splits.json` records. */
  rowIndices?: { train: number[]; validation: number[]; test: number[] };
  /**
   * With `data.folds` = k: the training and validation rows cut into k folds (the test rows stay out).
   * Fold i trains on the other folds and is scored on its own rows, with its own recipe fitted on its training part.
   */
  folds?: PreparedFold[];
  /** The seed the folds were drawn with (the study seed). */
  foldSeed?: number;
  /**
   * With `prepareData`'s `choices`: the same rows and splits (and folds) encoded under another
   * preprocessing choice, its recipe fitted on the same training rows. Absent: only this one.
   */
  prepareChoice?: (choice: PreprocessingChoice) => Promise<PreparedData>;
  /**
   * With `prepareData`'s `choices`: the model inputs of the data `prepareChoice` gives for a choice,
   * from its recipe alone (fitted on the training rows once per choice and kept for its encoding, no row encoded). Absent: `recipe.inputCount`.
   */
  inputCountFor?: (choice: PreprocessingChoice) => number;
}

/** One fold of k-fold cross-validation: its data set as trials train on it. */
export interface PreparedFold {
  /** Fitted on this fold's training rows only. */
  recipe: PreprocessingRecipe;
  train: SplitArrays;
  validation: SplitArrays;
  classWeights?: number[];
  /** `data.costs` as `[actual][predicted]` by class index (src/data/costs.ts); absent without costs. */
  costMatrix?: number[][];
  /** 0-based data-row indices of this fold's validation rows, ascending. */
  rows: number[];
}

/** A short description of the data set, kept in the study file. */
export interface DataSummary {
  file: string;
  rows: number;
  columns: number;
  trainRows: number;
  validationRows: number;
  testRows: number;
  inputCount: number;
  /** Rows per class in the whole file (classification only). */
  classCounts?: Record<string, number>;
  missingValues: number;
}
