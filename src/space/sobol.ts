/**
 * The Sobol quasi-random sequence in gray-code order, with Joe and Kuo's direction numbers.
 * Source: Joe, Kuo, "Constructing Sobol sequences with better two-dimensional projections", SIAM J. Sci.
 * Comput. 30, 2008 (the table new-joe-kuo-6.21201, dimensions 2 to 21 below); generation as in Joe, Kuo,
 * "Remark on Algorithm 659", ACM TOMS 29, 2003; Antonov, Saleev 1979 for the gray-code order.
 */
import type { Rng } from '../random/streams.js';

const BITS = 32;

/** Degree s, coefficient a and initial direction numbers m_1..m_s of dimensions 2, 3, ... (dimension 1 is the van der Corput sequence). */
const JOE_KUO: readonly (readonly [s: number, a: number, m: readonly number[]])[] = [
  [1, 0, [1]],
  [2, 1, [1, 3]],
  [3, 1, [1, 3, 1]],
  [3, 2, [1, 1, 1]],
  [4, 1, [1, 1, 3, 3]],
  [4, 4, [1, 3, 5, 13]],
  [5, 2, [1, 1, 5, 5, 17]],
  [5, 4, [1, 1, 5, 5, 5]],
  [5, 7, [1, 1, 7, 11, 19]],
  [5, 11, [1, 1, 5, 1, 1]],
  [5, 13, [1, 1, 1, 3, 11]],
  [5, 14, [1, 3, 5, 5, 31]],
  [6, 1, [1, 3, 3, 9, 7, 49]],
  [6, 13, [1, 1, 1, 15, 21, 21]],
  [6, 16, [1, 3, 1, 13, 27, 49]],
  [6, 19, [1, 1, 1, 15, 7, 5]],
  [6, 22, [1, 3, 1, 15, 13, 25]],
  [6, 25, [1, 1, 5, 5, 19, 61]],
  [7, 1, [1, 3, 7, 11, 23, 15, 103]],
  [7, 4, [1, 3, 7, 13, 13, 15, 69]],
];

/** Dimensions this implementation supports. */
export const SOBOL_MAX_DIMENSIONS = JOE_KUO.length + 1;

/** Direction numbers V_1..V_32 of one dimension, as 32-bit unsigned integers (V_k = m_k 2^(32 - k)). */
function directionNumbers(dimension: number): Uint32Array {
  const v = new Uint32Array(BITS + 1);
  if (dimension === 0) {
    for (let k = 1; k <= BITS; k++) v[k] = 2 ** (BITS - k);
    return v;
  }
  const [s, a, m] = JOE_KUO[dimension - 1]!;
  for (let k = 1; k <= BITS; k++) {
    if (k <= s) {
      v[k] = (m[k - 1]! * 2 ** (BITS - k)) >>> 0;
      continue;
    }
    let value = (v[k - s]! ^ (v[k - s]! >>> s)) >>> 0;
    for (let i = 1; i < s; i++) if ((a >>> (s - 1 - i)) & 1) value = (value ^ v[k - i]!) >>> 0;
    v[k] = value;
  }
  return v;
}

/** Index (1-based) of the lowest zero bit of n: which direction number the gray-code step n -> n + 1 flips. */
function lowestZeroBit(n: number): number {
  let c = 1;
  for (let value = n; value & 1; value = Math.floor(value / 2)) c++;
  return c;
}

/**
 * Points of the d-dimensional Sobol sequence in [0, 1)^d. Point 0 is the origin; `shift` (one 32-bit
 * integer per dimension, XORed into every point) is a random digital shift, which keeps the sequence's
 * equidistribution while moving it off the origin.
 * Source: Owen, "Randomly permuted (t,m,s)-nets and (t,s)-sequences", 1995 (a digital shift keeps the net property; From memory).
 */
export class SobolSequence {
  private readonly directions: Uint32Array[];
  private readonly state: Uint32Array;
  private index = 0;
  private readonly generated: number[][] = [];

  constructor(readonly dimensions: number, private readonly shift?: Uint32Array) {
    if (!Number.isInteger(dimensions) || dimensions < 1 || dimensions > SOBOL_MAX_DIMENSIONS) {
      throw new RangeError(`Sobol sequence: ${dimensions} dimensions; 1 to ${SOBOL_MAX_DIMENSIONS} are supported`);
    }
    if (shift && shift.length !== dimensions) throw new RangeError(`Sobol sequence: a shift of ${shift.length} values for ${dimensions} dimensions`);
    this.directions = Array.from({ length: dimensions }, (_, d) => directionNumbers(d));
    this.state = new Uint32Array(dimensions);
  }

  /** The next point (the first call gives point 0). */
  private next(): number[] {
    if (this.index > 0) {
      const c = lowestZeroBit(this.index - 1);
      if (c > BITS) throw new RangeError('Sobol sequence: more than 2^32 points');
      for (let d = 0; d < this.dimensions; d++) this.state[d] = (this.state[d]! ^ this.directions[d]![c]!) >>> 0;
    }
    this.index++;
    return Array.from(this.state, (x, d) => ((this.shift ? (x ^ this.shift[d]!) >>> 0 : x)) / 2 ** BITS);
  }

  /** Point `index` of the sequence (points are generated in order once and kept). */
  at(index: number): number[] {
    while (this.generated.length <= index) this.generated.push(this.next());
    return [...this.generated[index]!];
  }
}

/** A random digital shift: one 32-bit integer per dimension, drawn from `rng`. */
export function digitalShift(dimensions: number, rng: Rng): Uint32Array {
  return Uint32Array.from({ length: dimensions }, () => (Math.floor(rng() * 2 ** 16) * 2 ** 16 + Math.floor(rng() * 2 ** 16)) >>> 0);
}
