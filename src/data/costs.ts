/**
 * The study's costs (`data.costs`) as a matrix by class index, `[actual][predicted]`, in the
 * model's output order; a cell the study does not list costs 0.
 */
import { UserError } from '../core/errors.js';
import type { CostSettings } from '../study/definition.js';

/**
 * The cost matrix of `costs` for `classes` (the target's labels in output order).
 * @throws UserError naming the cell when a label is not a class of the target column.
 */
export function costMatrixFor(costs: CostSettings, classes: readonly string[], target: string, definitionFile: string): number[][] {
  const matrix = classes.map(() => classes.map(() => 0));
  costs.cells.forEach((cell, i) => {
    const actual = classIndex(cell.actual, classes, `${definitionFile}: data.costs.cells[${i}].actual`, target);
    const predicted = classIndex(cell.predicted, classes, `${definitionFile}: data.costs.cells[${i}].predicted`, target);
    matrix[actual]![predicted] = cell.cost;
  });
  return matrix;
}

function classIndex(label: string, classes: readonly string[], where: string, target: string): number {
  const index = classes.indexOf(label);
  if (index >= 0) return index;
  const shown = classes.slice(0, 12).map((c) => `'${c}'`).join(', ');
  throw new UserError('E_DATA', `${where}: '${label}' is not a class of column '${target}'; expected one of ${shown}${classes.length > 12 ? ` and ${classes.length - 12} more` : ''}`);
}
