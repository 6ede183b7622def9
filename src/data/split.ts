import { UserError } from '../core/errors.js';
import { permutation, stream } from '../random/streams.js';

/** What to split and how. */
export interface SplitOptions {
  /** Number of data rows. */
  rows: number;
  /** Class label of each row: stratifies the split. Omit for a plain shuffle (regression). */
  strata?: readonly string[];
  /** Share of rows for validation, in (0, 1). */
  validationFraction: number;
  /** Share of rows held out for the final test, in [0, 1); 0 means no test split. */
  testFraction: number;
  splitSeed: number;
  /** Names the data in messages. */
  file: string;
}

/** Row indices (0-based, ascending) of each split. Together they hold every row exactly once. */
export interface SplitIndices {
  train: number[];
  validation: number[];
  test: number[];
}

type Sizes = [train: number, validation: number, test: number];

/** Rows each split gets in total: rounded shares, at least 1 for each split with a share, at least 2 for training. */
export function splitSizes(options: Pick<SplitOptions, 'rows' | 'validationFraction' | 'testFraction' | 'file'>): Sizes {
  const { rows, validationFraction, testFraction, file } = options;
  const validation = Math.max(1, Math.round(rows * validationFraction));
  const test = testFraction > 0 ? Math.max(1, Math.round(rows * testFraction)) : 0;
  const train = rows - validation - test;
  if (train < 2) {
    throw new UserError(
      'E_DATA',
      `${file}: ${rows} rows are too few for validationFraction ${validationFraction} and testFraction ${testFraction}: ` +
        `each split needs at least 1 row and training at least 2 (this split would leave ${Math.max(train, 0)} for training)`,
    );
  }
  return [train, validation, test];
}

/**
 * Splits rows into training, validation and test, drawing from `stream(splitSeed, 'split')`.
 * With `strata`, each class is split in the same proportions as the whole: split totals equal
 * {@link splitSizes}, and every split with a share gets at least one row of each class that has
 * at least one row per such split (that floor wins over exact totals when the two conflict).
 */
export function splitRows(options: SplitOptions): SplitIndices {
  const sizes = splitSizes(options);
  const rng = stream(options.splitSeed, 'split');
  if (options.strata === undefined) {
    const order = Array.from(permutation(options.rows, rng));
    return fromOrder([order], [sizes]);
  }

  const byClass = new Map<string, number[]>();
  options.strata.forEach((label, row) => {
    const members = byClass.get(label);
    if (members === undefined) byClass.set(label, [row]);
    else members.push(row);
  });
  // Sorted class order keeps the draws independent of row order within the file.
  const classes = [...byClass.keys()].sort();
  const orders = classes.map((label) => {
    const members = byClass.get(label)!;
    return Array.from(permutation(members.length, rng), (i) => members[i]!);
  });
  const allocation = allocate(
    orders.map((order) => order.length),
    sizes,
  );
  return fromOrder(orders, allocation);
}

function fromOrder(orders: number[][], allocation: Sizes[]): SplitIndices {
  const result: SplitIndices = { train: [], validation: [], test: [] };
  orders.forEach((order, c) => {
    const [train, validation] = allocation[c]!;
    // concat, not push(...): a spread of a million rows overflows the call stack.
    result.train = result.train.concat(order.slice(0, train));
    result.validation = result.validation.concat(order.slice(train, train + validation));
    result.test = result.test.concat(order.slice(train + validation));
  });
  const ascending = (a: number, b: number): number => a - b;
  result.train.sort(ascending);
  result.validation.sort(ascending);
  result.test.sort(ascending);
  return result;
}

/**
 * Rows of each class per split. Starts from each class's largest-remainder share of the totals,
 * applies the one-row-per-split floor, then moves single rows from splits over their total to
 * splits under it, taking each time from the class furthest above its proportional share.
 */
function allocate(classSizes: number[], totals: Sizes): Sizes[] {
  const rows = totals[0] + totals[1] + totals[2];
  const active = [0, 1, 2].filter((s) => totals[s]! > 0);
  const quota = classSizes.map((n) => totals.map((t) => (n * t) / rows));
  const floors = classSizes.map((n) => totals.map((t) => (t > 0 && n >= active.length ? 1 : 0)));

  const allocation = classSizes.map((n, c) => {
    const cells = quota[c]!.map((q, s) => Math.max(Math.floor(q), floors[c]![s]!));
    let left = n - cells.reduce((a, b) => a + b, 0);
    // Largest remainder first; ties go to training, then validation.
    const order = [0, 1, 2].filter((s) => totals[s]! > 0).sort((a, b) => remainder(quota[c]![b]!) - remainder(quota[c]![a]!) || a - b);
    for (let i = 0; left > 0; i = (i + 1) % order.length, left--) cells[order[i]!]!++;
    // Floors can overshoot a tiny class; give rows back from the largest cell.
    while (left < 0) {
      const s = [0, 1, 2].reduce((best, k) => (cells[k]! - floors[c]![k]! > cells[best]! - floors[c]![best]! ? k : best), 0);
      cells[s]!--;
      left++;
    }
    return cells as Sizes;
  });

  for (;;) {
    const column = (s: number): number => allocation.reduce((sum, cells) => sum + cells[s]!, 0);
    const over = [0, 1, 2].find((s) => column(s) > totals[s]!);
    const under = [0, 1, 2].find((s) => column(s) < totals[s]!);
    if (over === undefined || under === undefined) break;
    let donor = -1;
    let excess = -Infinity;
    allocation.forEach((cells, c) => {
      if (cells[over]! <= floors[c]![over]!) return;
      const e = cells[over]! - quota[c]![over]! - (cells[under]! - quota[c]![under]!);
      if (e > excess) [donor, excess] = [c, e];
    });
    if (donor < 0) break;
    allocation[donor]![over]!--;
    allocation[donor]![under]!++;
  }
  return allocation;
}

function remainder(value: number): number {
  return value - Math.floor(value);
}
