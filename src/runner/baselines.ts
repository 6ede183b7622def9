/** The study's baselines, computed once from the prepared data before the first trial. */
import type { StudyBaselines } from '../core/baselines.js';
import type { PreparedData } from '../data/types.js';
import { constantBaseline } from '../metrics/constant-baseline.js';

/** The constant predictor on the study's validation rows (with folds: the mean over the folds). */
export function studyBaselines(data: PreparedData): StudyBaselines {
  const { recipe } = data;
  const classCount = recipe.classes?.length ?? 0;
  const parts = data.folds && data.folds.length > 0 ? data.folds : [data];
  const splits = parts.map((part) => ({ trainY: part.train.y, validationY: part.validation.y }));
  const scaling = (fold: number): { mean: number; std: number } | undefined => parts[fold]!.recipe.targetScaling;
  return { constant: constantBaseline(recipe.task, splits, classCount, scaling) };
}
