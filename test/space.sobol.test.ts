import { describe, expect, it } from 'vitest';
import { stream } from '../src/random/streams.js';
import { SOBOL_MAX_DIMENSIONS, SobolSequence, digitalShift } from '../src/space/sobol.js';

const points = (sequence: SobolSequence, from: number, count: number) => Array.from({ length: count }, (_, i) => sequence.at(from + i));

describe('Sobol sequence', () => {
  it('gives the published first 2-D points, origin kept', () => {
    // Source: Joe, Kuo, SIAM J. Sci. Comput. 30, 2008, direction numbers; points as listed in REFERENCES.md (confirmed), gray-code order.
    expect(points(new SobolSequence(2), 0, 8)).toEqual([
      [0, 0], [0.5, 0.5], [0.75, 0.25], [0.25, 0.75], [0.375, 0.375], [0.875, 0.875], [0.625, 0.125], [0.125, 0.625],
    ]);
  });

  it('gives the published points with the origin skipped, ending at (0.1875, 0.3125)', () => {
    // Source: REFERENCES.md, Sobol sequence (confirmed): skipping the origin appends (0.1875, 0.3125).
    expect(points(new SobolSequence(2), 1, 8)).toEqual([
      [0.5, 0.5], [0.75, 0.25], [0.25, 0.75], [0.375, 0.375], [0.875, 0.875], [0.625, 0.125], [0.125, 0.625], [0.1875, 0.3125],
    ]);
  });

  it('puts exactly one of the first 2^m points in each of the 2^m equal cells of every coordinate, shifted or not', () => {
    // Source: Sobol, "On the distribution of points in a cube...", USSR Comput. Math. Math. Phys. 7, 1967: every
    // coordinate is a (0, m, 1)-net in base 2 (From memory); a digital shift permutes the cells (Owen 1995, From memory).
    for (const shift of [undefined, digitalShift(SOBOL_MAX_DIMENSIONS, stream(4, 'shift'))]) {
      const first = points(new SobolSequence(SOBOL_MAX_DIMENSIONS, shift), 0, 64);
      for (let d = 0; d < SOBOL_MAX_DIMENSIONS; d++) {
        expect(new Set(first.map((p) => Math.floor(p[d]! * 64))).size).toBe(64);
      }
    }
  });

  it('follows the recurrence for higher degrees: dimensions 3 and 4 worked by hand', () => {
    // Source: Joe, Kuo, ACM TOMS 29, 2003, section 2 (V_k = V_{k-s} xor V_{k-s} / 2^s xor the a-selected V_{k-i}),
    // table new-joe-kuo-6.21201 (confirmed in three copies). Worked here in binary fractions:
    // dim 3 (s 2, a 1, m 1 3): V = .1, .11, .1 ^ .001 ^ .11 = .011, so x = 0, .5, .25, .75, .625, .125, .875, .375, then ^ V4.
    // dim 4 (s 3, a 1, m 1 3 1): V = .1, .11, .001, .1 ^ .0001 ^ .11 = .0101, so x_8 = .125 ^ .3125 = .4375.
    const first = points(new SobolSequence(4), 0, 9);
    expect(first.slice(0, 8).map((p) => p[2])).toEqual([0, 0.5, 0.25, 0.75, 0.625, 0.125, 0.875, 0.375]);
    expect(first.map((p) => p[3])).toEqual([0, 0.5, 0.25, 0.75, 0.875, 0.375, 0.625, 0.125, 0.4375]);
  });

  it('moves every point off its unshifted place by the seed, the same for the same seed', () => {
    const plain = points(new SobolSequence(3), 0, 4);
    const shifted = (seed: number) => points(new SobolSequence(3, digitalShift(3, stream(seed, 'shift'))), 0, 4);
    expect(shifted(1)).toEqual(shifted(1));
    expect(shifted(1)).not.toEqual(shifted(2));
    expect(shifted(1)[0]).not.toEqual(plain[0]);
  });

  it(`supports 1 to ${SOBOL_MAX_DIMENSIONS} dimensions and says so otherwise`, () => {
    expect(() => new SobolSequence(SOBOL_MAX_DIMENSIONS + 1)).toThrow(/1 to 21 are supported/);
    expect(new SobolSequence(1).at(3)).toEqual([0.25]);
  });
});
