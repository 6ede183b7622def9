/**
 * Per-class figures of a classifier on the validation split: the confusion matrix, and each
 * class's average precision against the rest. Computed once at the end of a job (not every epoch)
 * from the outputs of the weights the job's checkpoint holds; per-class precision, recall and F1
 * follow from the matrix (`perClassFigures`).
 */
import type { ClassFigures } from '../core/class-figures.js';
import type { SharedDataset } from '../core/job.js';
import type { Task } from '../core/configuration.js';
import { argmaxRows } from './metrics.js';
import { averagePrecision } from './precision-recall.js';

/** Precision, recall, F1 and support of one class, from a confusion matrix. */
export interface ClassFigureRow {
  label: string;
  /** Validation rows of the class. */
  rows: number;
  /** TP / (TP + FP); 0 when nothing was predicted as the class. */
  precision: number;
  /** TP / (TP + FN); 0 when the class has no rows. */
  recall: number;
  /** 2 P R / (P + R); 0 when both are 0. */
  f1: number;
  averagePrecision: number | null;
}

/** Rows of `classCount` x `classCount` counts: [true class][predicted class]. */
export function confusionMatrix(trueClasses: ArrayLike<number>, predictedClasses: ArrayLike<number>, classCount: number): number[][] {
  const matrix = Array.from({ length: classCount }, () => new Array<number>(classCount).fill(0));
  for (let i = 0; i < trueClasses.length; i++) matrix[trueClasses[i]!]![predictedClasses[i]!]! += 1;
  return matrix;
}

/**
 * Precision, recall and F1 per class from a confusion matrix, as the usual one-vs-rest counts
 * (a class never predicted has precision 0, as scikit-learn's `zero_division=0`).
 */
export function perClassFigures(figures: Pick<ClassFigures, 'confusion' | 'averagePrecision'>, classes: readonly string[]): ClassFigureRow[] {
  const { confusion } = figures;
  return classes.map((label, c) => {
    const truePositives = confusion[c]![c]!;
    const rows = confusion[c]!.reduce((sum, count) => sum + count, 0);
    const predicted = confusion.reduce((sum, row) => sum + row[c]!, 0);
    const precision = predicted === 0 ? 0 : truePositives / predicted;
    const recall = rows === 0 ? 0 : truePositives / rows;
    const f1 = precision + recall === 0 ? 0 : (2 * precision * recall) / (precision + recall);
    return { label, rows, precision, recall, f1, averagePrecision: figures.averagePrecision[c] ?? null };
  });
}

/** The precision-recall AUC shown for a trial: the positive class's average precision (binary) or the mean over classes (multiclass). */
export function summaryAveragePrecision(task: Task, averagePrecisions: readonly (number | null)[]): number | null {
  if (task === 'binary') return averagePrecisions[1] ?? null;
  const present = averagePrecisions.filter((value): value is number => value !== null);
  return present.length === 0 ? null : present.reduce((sum, value) => sum + value, 0) / present.length;
}

/**
 * The figures of validation outputs: P(class 1) per row (binary, counted at `threshold`) or rows x
 * classes probabilities (multiclass, the largest wins). Undefined for regression.
 */
export function classFigures(task: Task, yTrue: ArrayLike<number>, outputs: Float32Array, outputCount: number, epoch: number, threshold = 0.5): ClassFigures | undefined {
  if (task === 'regression') return undefined;
  const trueClasses = Int32Array.from(yTrue);
  const classCount = task === 'binary' ? 2 : outputCount;
  const predicted = task === 'binary' ? Int32Array.from(outputs, (p) => (p >= threshold ? 1 : 0)) : argmaxRows(outputs, outputCount);
  const scoreOf = (c: number): Float64Array =>
    task === 'binary' ? Float64Array.from(outputs, (p) => (c === 1 ? p : 1 - p)) : Float64Array.from({ length: trueClasses.length }, (_, r) => outputs[r * outputCount + c]!);
  const averagePrecisions = Array.from({ length: classCount }, (_, c) => {
    const value = averagePrecision(Int32Array.from(trueClasses, (t) => (t === c ? 1 : 0)), scoreOf(c));
    return Number.isNaN(value) ? null : value;
  });
  const figures: ClassFigures = { epoch, confusion: confusionMatrix(trueClasses, predicted, classCount), averagePrecision: averagePrecisions };
  if (task === 'binary') figures.threshold = threshold;
  return figures;
}

/** A job's figures at its last epoch (`epoch`), from the validation outputs of the weights it checkpoints. */
export function jobClassFigures(dataset: SharedDataset, outputs: Float32Array, epoch: number): ClassFigures | undefined {
  return classFigures(dataset.task, dataset.validation.y, outputs, dataset.outputCount, epoch);
}
