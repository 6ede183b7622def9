/**
 * What a study from a CSV and a target alone needs to know before it is defined: the size of the data
 * and the task, read from the target column by a stated rule.
 */
import { UserError } from '../core/errors.js';
import type { Task } from '../core/configuration.js';
import { didYouMean } from '../text/nearest.js';
import { isMissing } from './csv.js';
import { ColumnSink, type RawColumn } from './columns.js';
import { streamCsv } from './source.js';

/** Most distinct whole numbers a target may hold and still be read as a quantity without asking: above it, regression. */
export const WHOLE_NUMBER_CLASS_LIMIT = 20;
/** Most distinct text labels read as classes; more is refused (an identifier or free text, not a class). */
export const TEXT_CLASS_LIMIT = 100;

export interface TargetInspection {
  /** Data rows (lines after the header). */
  rows: number;
  /** Columns in the header, the target included. */
  columns: number;
  task: Task;
  /** How the task was decided, in one sentence for the user. */
  reason: string;
}

/**
 * The rule (common practice, no source), applied to the target's non-missing cells:
 * - any cell that is not a number: classes; 2 distinct labels binary, 3 to 100 multiclass, more refused;
 * - numbers only, exactly 2 distinct values: binary;
 * - numbers with a fractional part, or more than 20 distinct whole numbers: regression;
 * - 3 to 20 distinct whole numbers: ambiguous (classes or a count), refused with the fix.
 * A task given by the user (`task`) skips the rule.
 * @throws UserError naming the file and the target when the column is absent, constant, empty or ambiguous.
 */
export async function inspectTarget(csvFile: string, target: string, label: string, task?: Task): Promise<TargetInspection> {
  let header: readonly string[] = [];
  const sink = new ColumnSink(csvFile, {
    only: new Set([target]),
    onHeader: (columns) => {
      header = columns;
      if (!columns.includes(target)) {
        throw new UserError('E_DATA', `${label}: target column '${target}' is not in ${csvFile}${didYouMean(target, columns)} (columns: ${columns.slice(0, 12).join(', ')})`);
      }
    },
  });
  await streamCsv(csvFile, sink);
  const table = sink.table();
  const column = table.column.get(target)!;
  const base = { rows: table.rows, columns: header.length };
  if (task) return { ...base, task, reason: `task '${task}' as given` };
  return { ...base, ...taskOfColumn(column, `${label}: target '${target}' of ${csvFile}`) };
}

/** The task a target column implies, by the rule of {@link inspectTarget}. */
export function taskOfColumn(column: RawColumn, where: string): { task: Task; reason: string } {
  const fix = `add --task binary|multiclass|regression (or "task" in the definition's data)`;
  const labels = textLabels(column);
  if (labels.size > 0) {
    for (const value of column.numbers) if (!Number.isNaN(value)) labels.add(String(value));
    if (labels.size === 2) return { task: 'binary', reason: `the target holds 2 distinct labels` };
    if (labels.size < 2) throw new UserError('E_DATA', `${where}: holds a single value; a study needs at least 2 classes or a varying number`);
    if (labels.size > TEXT_CLASS_LIMIT) {
      throw new UserError('E_DATA', `${where}: holds ${labels.size} distinct text values, more than ${TEXT_CLASS_LIMIT} classes; is it the right column? For a number written as text, fix the cells; else ${fix}`);
    }
    return { task: 'multiclass', reason: `the target holds ${labels.size} distinct text labels` };
  }
  const distinct = new Set<number>();
  let fractional = false;
  for (const value of column.numbers) {
    if (Number.isNaN(value)) continue;
    distinct.add(value);
    if (!Number.isInteger(value)) fractional = true;
  }
  if (distinct.size < 2) throw new UserError('E_DATA', `${where}: holds ${distinct.size === 0 ? 'no value' : 'a single value'}; a study needs at least 2 classes or a varying number`);
  if (distinct.size === 2) return { task: 'binary', reason: `the target holds 2 distinct values` };
  if (fractional) return { task: 'regression', reason: `the target holds numbers with a fractional part` };
  if (distinct.size > WHOLE_NUMBER_CLASS_LIMIT) return { task: 'regression', reason: `the target holds ${distinct.size} distinct whole numbers (more than ${WHOLE_NUMBER_CLASS_LIMIT})` };
  const shown = [...distinct].sort((a, b) => a - b).slice(0, 6).join(', ');
  throw new UserError('E_DATA', `${where}: holds ${distinct.size} distinct whole numbers (${shown}${distinct.size > 6 ? ', ...' : ''}): classes or a quantity? ${fix}`);
}

/** Distinct spellings of the cells that are neither numbers nor missing. */
function textLabels(column: RawColumn): Set<string> {
  const used = new Set<number>(column.spelledCodes);
  const labels = new Set<string>();
  for (const code of used) {
    const text = column.spellings[code]!;
    if (!isMissing(text)) labels.add(text);
  }
  return labels;
}
