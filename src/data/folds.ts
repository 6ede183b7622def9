import { UserError } from '../core/errors.js';
import { permutation, stream } from '../random/streams.js';

/** What to cut into folds. */
export interface FoldOptions {
  /** 0-based data-row indices to cut (the training and validation rows; the test rows stay out). */
  rows: readonly number[];
  /** Class label of every data row (indexed by row, not by position in `rows`): stratifies the folds. Omit for regression. */
  strata?: readonly string[];
  k: number;
  /** The study seed; the draws come from `stream(seed, 'folds')`. */
  seed: number;
  /** Names the data and the field in messages. */
  file: string;
  definitionFile: string;
}

/**
 * Cuts rows into k folds. Each class's rows (classes in sorted order) are shuffled from the seeded
 * stream and laid end to end, and position i goes to fold i mod k: every fold gets the class's
 * n_c / k rows rounded down or up, and fold sizes differ by at most one row.
 * Returns k arrays of row indices, each ascending, disjoint, together holding every row of `rows`.
 * @throws UserError (E_DATA) when a fold would get no row of some class, or no row at all.
 */
export function assignFolds(options: FoldOptions): number[][] {
  const { rows, strata, k, seed, file, definitionFile } = options;
  if (rows.length < k) {
    throw new UserError('E_DATA', `${definitionFile}: data.folds: ${k} folds need at least ${k} training and validation rows; ${file} has ${rows.length}`);
  }
  const rng = stream(seed, 'folds');
  const groups = new Map<string, number[]>();
  for (const row of rows) {
    const label = strata ? strata[row]! : '';
    const members = groups.get(label);
    if (members) members.push(row);
    else groups.set(label, [row]);
  }
  const sequence: number[] = [];
  for (const label of [...groups.keys()].sort()) {
    const members = groups.get(label)!;
    if (strata && members.length < k) {
      throw new UserError(
        'E_DATA',
        `${definitionFile}: data.folds: class '${label}' has ${members.length} training and validation row${members.length === 1 ? '' : 's'} in ${file}; ${k} stratified folds need at least ${k} rows of each class (use fewer folds)`,
      );
    }
    for (const i of permutation(members.length, rng)) sequence.push(members[i]!);
  }
  const folds = Array.from({ length: k }, (): number[] => []);
  sequence.forEach((row, i) => folds[i % k]!.push(row));
  for (const fold of folds) fold.sort((a, b) => a - b);
  return folds;
}

/** The rows of every fold but `fold`, ascending: that fold's training rows. */
export function otherFolds(folds: readonly (readonly number[])[], fold: number): number[] {
  const rows: number[] = [];
  folds.forEach((members, i) => {
    if (i !== fold) for (const row of members) rows.push(row);
  });
  return rows.sort((a, b) => a - b);
}
