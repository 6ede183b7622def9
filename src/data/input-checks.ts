/**
 * What `predict` filled in or could not place, counted per column while the rows are encoded
 * (README, "What predict warns about"): categories the training split never held (encoded as no
 * category), blank categories (filled with the training's most frequent one) and missing numbers
 * (filled with the training mean).
 */
import { UserError } from '../core/errors.js';
import type { FeatureRecipe, PreprocessingRecipe } from './types.js';
import type { FeatureValues } from './values.js';

/** The label of a categorical column's pooled input in input names (`column=(pooled)`), and what an unseen category is encoded as where a column pools. */
export const POOLED_INPUT = '(pooled)';

export type InputIssueKind = 'unseen-category' | 'blank-category' | 'missing-number';

/** One kind of filled-in or unplaced cell in one column, with how many rows had it and the first. */
export interface InputIssue {
  column: string;
  kind: InputIssueKind;
  /** Rows with it. */
  count: number;
  /** The first such cell as written ('' for a blank cell). */
  example: string;
  /** 0-based index of the first such row in the input. */
  firstRow: number;
  /** CSV line of the first such row, when the rows came from a CSV. */
  firstLine?: number;
  /** What the cells were encoded as: the training category or mean filled in, or the pooled input for an unseen category where the column pools; absent for an unseen category otherwise (no category). */
  filledWith?: string | number;
}

/** How the kinds are spelled in messages, in this order. */
const KINDS: readonly InputIssueKind[] = ['unseen-category', 'blank-category', 'missing-number'];

/**
 * Counts the issues of encoded row-wise input: `features` are the columns in the recipe's order,
 * `cells` each column's cells as written, `lines` the CSV line of each row when known.
 * Ordered by column (the recipe's order), then kind.
 */
export function countInputIssues(recipe: PreprocessingRecipe, features: readonly FeatureValues[], cells: readonly (readonly string[])[], lines?: readonly number[]): InputIssue[] {
  const issues: InputIssue[] = [];
  recipe.features.forEach((feature, f) => {
    const column = features[f]!;
    const found = new Map<InputIssueKind, InputIssue>();
    const note = (kind: InputIssueKind, row: number): void => {
      const known = found.get(kind);
      if (known) {
        known.count++;
        return;
      }
      const issue: InputIssue = { column: feature.name, kind, count: 1, example: cells[f]![row] ?? '', firstRow: row };
      const line = lines?.[row];
      if (line !== undefined) issue.firstLine = line;
      const filled = filledWith(feature, kind);
      if (filled !== undefined) issue.filledWith = filled;
      found.set(kind, issue);
    };
    if (column.kind === 'numeric') {
      column.values.forEach((value, row) => {
        if (Number.isNaN(value)) note('missing-number', row);
      });
    } else if (feature.kind === 'categorical') {
      const known = new Set([...feature.categories, ...(feature.pooled ?? [])]);
      const seen = column.labels.map((label) => known.has(label));
      column.codes.forEach((code, row) => {
        if (code < 0) note('blank-category', row);
        else if (!seen[code]) note('unseen-category', row);
      });
    }
    for (const kind of KINDS) {
      const issue = found.get(kind);
      if (issue) issues.push(issue);
    }
  });
  return issues;
}

function filledWith(feature: FeatureRecipe, kind: InputIssueKind): string | number | undefined {
  if (kind === 'missing-number' && feature.kind === 'numeric') return feature.mean;
  if (kind === 'blank-category' && feature.kind === 'categorical') return feature.fill;
  if (kind === 'unseen-category' && feature.kind === 'categorical' && feature.pooled) return POOLED_INPUT;
  return undefined;
}

const rows = (count: number): string => `${count.toLocaleString('en-US')} row${count === 1 ? '' : 's'}`;
const cell = (text: string): string => (text.trim() === '' ? 'a blank cell' : `'${text}'`);
const place = (issue: InputIssue): string => (issue.firstLine !== undefined ? `line ${issue.firstLine}` : `row ${issue.firstRow}`);
const shown = (value: string | number | undefined): string => (typeof value === 'number' ? String(Number(value.toPrecision(6))) : `'${value ?? ''}'`);

/** One warning line for an issue: the source, the column, the count, the first cell and what was done. */
export function inputIssueWarning(issue: InputIssue, source: string): string {
  const where = `${source}: column '${issue.column}'`;
  const first = `${cell(issue.example)} on ${place(issue)}`;
  const one = issue.count === 1;
  switch (issue.kind) {
    case 'unseen-category':
      return `${where}: ${rows(issue.count)} ${one ? 'holds' : 'hold'} a category the training split never held (first ${first}); ${issue.filledWith === POOLED_INPUT ? 'encoded as the pooled rare categories' : 'encoded as no category'}`;
    case 'blank-category':
      return `${where}: ${rows(issue.count)} ${one ? 'has' : 'have'} no category (first ${first}); filled with the training's most frequent category ${shown(issue.filledWith)}`;
    case 'missing-number':
      return `${where}: ${rows(issue.count)} ${one ? 'has' : 'have'} no number (first ${first}); filled with the training mean ${shown(issue.filledWith)}`;
  }
}

/**
 * The error a strict prediction stops with: the earliest row with any issue, naming the source, the
 * line (or row), the column and what is wrong, and how many such rows there are in all.
 * @param how how strictness was asked for, for the message (`--strict`).
 * @param tail what follows, e.g. that nothing was written.
 */
export function strictInputError(issues: readonly InputIssue[], source: string, how = 'strict', tail = ''): UserError {
  const first = [...issues].sort((a, b) => a.firstRow - b.firstRow)[0]!;
  const what =
    first.kind === 'unseen-category'
      ? `holds '${first.example}', a category the training split never held`
      : first.kind === 'blank-category'
        ? `has no category (${cell(first.example)})`
        : `has no number (${cell(first.example)})`;
  const total = issues.reduce((sum, issue) => sum + issue.count, 0);
  return new UserError(
    'E_PREDICT_STRICT',
    `${source}: ${place(first)}: column '${first.column}' ${what}; ${how} refuses unseen and blank categories and missing numbers (${total.toLocaleString('en-US')} such cell${total === 1 ? '' : 's'} in all)${tail}`,
  );
}
