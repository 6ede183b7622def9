/**
 * The per-class report of one trial, as `ranking --json`, the HTML report and `export` show it:
 * the validation confusion matrix with the class labels, precision, recall, F1 and average
 * precision per class, and the trial's precision-recall AUC. One shape, built from the figures the
 * study file keeps (src/metrics/class-figures.ts).
 */
import type { Task } from '../core/configuration.js';
import { perClassFigures, summaryAveragePrecision, type ClassFigureRow } from '../metrics/class-figures.js';
import type { ClassFigures } from '../core/class-figures.js';

export interface ClassReport {
  /** The epoch the figures describe. */
  epoch: number;
  /** Binary only: the threshold on P(second class) the matrix was counted at. */
  threshold?: number;
  /** Class labels in output order: the rows (true class) and columns (predicted class) of `confusion`. */
  labels: string[];
  confusion: number[][];
  perClass: ClassFigureRow[];
  /** Average precision of the positive class (binary) or its mean over classes (multiclass): the step-wise precision-recall AUC. */
  precisionRecallAuc: number | null;
}

/** The report of `figures` for a task whose classes are `labels` (the recipe's, in output order). */
export function classReport(task: Task, labels: readonly string[], figures: ClassFigures): ClassReport {
  const report: ClassReport = {
    epoch: figures.epoch,
    labels: [...labels],
    confusion: figures.confusion.map((row) => [...row]),
    perClass: perClassFigures(figures, labels),
    precisionRecallAuc: summaryAveragePrecision(task, figures.averagePrecision),
  };
  if (figures.threshold !== undefined) report.threshold = figures.threshold;
  return report;
}

/** The report of a trial of a study, when the study file holds its figures. */
export function trialClassReport(doc: { recipe: { task: Task; classes?: string[] } }, trial: { classFigures?: ClassFigures }): ClassReport | undefined {
  const { classes } = doc.recipe;
  if (!trial.classFigures || !classes) return undefined;
  return classReport(doc.recipe.task, classes, trial.classFigures);
}

const share = (value: number | null): string => (value === null ? '-' : value.toFixed(3));

/** The report as lines of text: per-class figures, then the confusion matrix (rows: true class). */
export function classReportText(report: ClassReport): string {
  const width = Math.max(5, ...report.labels.map((label) => label.length));
  const pad = (text: string): string => text.padEnd(width);
  const lines = [
    `validation rows by class (epoch ${report.epoch}${report.threshold !== undefined ? `, threshold ${Number(report.threshold.toPrecision(4))}` : ''}), precision-recall AUC ${share(report.precisionRecallAuc)}`,
    `  ${pad('class')}  rows  precision  recall     F1  PR AUC`,
    ...report.perClass.map(
      (row) => `  ${pad(row.label)}  ${String(row.rows).padStart(4)}  ${share(row.precision).padStart(9)}  ${share(row.recall).padStart(6)}  ${share(row.f1).padStart(5)}  ${share(row.averagePrecision).padStart(6)}`,
    ),
    `  confusion (rows: true class, columns: predicted)`,
    `  ${pad('')}  ${report.labels.map((label) => label.padStart(6)).join(' ')}`,
    ...report.confusion.map((row, t) => `  ${pad(report.labels[t]!)}  ${row.map((count) => String(count).padStart(Math.max(6, report.labels[t]!.length))).join(' ')}`),
  ];
  return lines.join('\n');
}
