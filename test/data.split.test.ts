import { describe, expect, it } from 'vitest';
import { splitRows, splitSizes, type SplitIndices } from '../src/data/split.js';

/** Labels a10 b6 c4 interleaved, so classes are not in contiguous blocks. */
const LABELS = 'aabacbaabcaabcabacba'.split('');

function countsByClass(labels: readonly string[], split: SplitIndices): Record<string, [number, number, number]> {
  const counts: Record<string, [number, number, number]> = {};
  (['train', 'validation', 'test'] as const).forEach((name, s) => {
    for (const row of split[name]) {
      const label = labels[row]!;
      const cells = (counts[label] ??= [0, 0, 0]);
      cells[s]!++;
    }
  });
  return counts;
}

const base = { validationFraction: 0.2, testFraction: 0.2, splitSeed: 7, file: 'small.csv' };

describe('stratified split', () => {
  it('splits each class in the proportions of the whole (60/20/20 of a10 b6 c4)', () => {
    const split = splitRows({ ...base, rows: LABELS.length, strata: LABELS });
    expect([split.train.length, split.validation.length, split.test.length]).toEqual([12, 4, 4]);
    // a: 6/2/2 exactly; b: 3.6/1.2/1.2 rounds to 4/1/1; c: 2.4/0.8/0.8 gets the one-row floor, 2/1/1.
    expect(countsByClass(LABELS, split)).toEqual({ a: [6, 2, 2], b: [4, 1, 1], c: [2, 1, 1] });
  });

  it('keeps split totals exact when per-class rounding overshoots (a5 b5 at 40/30/30)', () => {
    const labels = 'ababababab'.split('');
    const split = splitRows({ ...base, validationFraction: 0.3, testFraction: 0.3, rows: 10, strata: labels });
    expect([split.train.length, split.validation.length, split.test.length]).toEqual([4, 3, 3]);
    const counts = countsByClass(labels, split);
    for (const label of ['a', 'b']) {
      expect(counts[label]![0]).toBe(2);
      expect(counts[label]!.every((n) => n >= 1)).toBe(true);
    }
  });

  it('puts every row in exactly one split, listed in ascending order', () => {
    const split = splitRows({ ...base, rows: LABELS.length, strata: LABELS });
    const all = [...split.train, ...split.validation, ...split.test].sort((a, b) => a - b);
    expect(all).toEqual(Array.from({ length: 20 }, (_, i) => i));
    for (const part of [split.train, split.validation, split.test]) expect(part).toEqual([...part].sort((a, b) => a - b));
  });

  it('is reproducible for the same seed and different for another seed', () => {
    const first = splitRows({ ...base, rows: LABELS.length, strata: LABELS });
    const again = splitRows({ ...base, rows: LABELS.length, strata: LABELS });
    const other = splitRows({ ...base, splitSeed: 8, rows: LABELS.length, strata: LABELS });
    expect(again).toEqual(first);
    expect(other).not.toEqual(first);
    // The proportions do not depend on the seed.
    expect(countsByClass(LABELS, other)).toEqual(countsByClass(LABELS, first));
  });

  it('gives no test rows when testFraction is 0', () => {
    const split = splitRows({ ...base, testFraction: 0, rows: LABELS.length, strata: LABELS });
    expect(split.test).toEqual([]);
    expect(countsByClass(LABELS, split)).toEqual({ a: [8, 2, 0], b: [5, 1, 0], c: [3, 1, 0] });
  });
});

describe('regression split', () => {
  it('shuffles all rows into rounded shares', () => {
    const split = splitRows({ ...base, rows: 20 });
    expect([split.train.length, split.validation.length, split.test.length]).toEqual([12, 4, 4]);
    expect(new Set([...split.train, ...split.validation, ...split.test]).size).toBe(20);
    expect(splitRows({ ...base, rows: 20 })).toEqual(split);
    expect(splitRows({ ...base, splitSeed: 99, rows: 20 })).not.toEqual(split);
  });
});

describe('split sizes', () => {
  it('gives each split with a share at least one row', () => {
    expect(splitSizes({ rows: 5, validationFraction: 0.05, testFraction: 0.05, file: 'f.csv' })).toEqual([3, 1, 1]);
  });

  it('rejects too few rows, naming the file, the row count and the fractions', () => {
    expect(() => splitSizes({ rows: 3, validationFraction: 0.2, testFraction: 0.15, file: 'tiny.csv' })).toThrow(
      /^tiny\.csv: 3 rows are too few for validationFraction 0\.2 and testFraction 0\.15: each split needs at least 1 row and training at least 2/,
    );
    expect(() => splitRows({ rows: 10, validationFraction: 0.5, testFraction: 0.5, splitSeed: 0, file: 'f.csv' })).toThrow(/10 rows are too few/);
  });
});
