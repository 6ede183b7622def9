/**
 * How one numeric input (its value after `numericInputs`: standardised, robust-clipped or mapped
 * onto the normal) becomes several network inputs, the space's `numericEncoding`
 * (docs/training.md, "Numeric encodings"). Source: Gorishniy, Rubachev and Babenko, "On Embeddings
 * for Numerical Features in Tabular Deep Learning", NeurIPS 2022, Section 3.2 (piecewise-linear
 * encoding) and Section 3.3 (periodic).
 *
 * - `piecewise-linear`: edges b_0 < ... < b_T are the training quantiles at 0, 1/T, ..., 1 (type 7,
 *   ties merged, so fewer distinct values give fewer bins); bin t gives e_t = 0 when x < b_{t-1} and
 *   t > 1, 1 when x >= b_t and t < T, else (x - b_{t-1}) / (b_t - b_{t-1}): the first bin's ramp goes
 *   on below b_0 and the last bin's above b_T, as the paper defines it (the definition read from a
 *   summary of the paper found with the search tool; the rest of Section 3.2 from memory). A constant
 *   column has one edge and gives one input, always 0.
 * - `periodic`: [sin(2 pi c_k x), cos(2 pi c_k x)] for k = 1..K, the c_k drawn once from N(0, sigma^2)
 *   per input from the study's seeded stream. The paper trains the c_k and a linear layer per feature;
 *   rungwise fixes them (a deviation from the paper), so the encoding is preprocessing like the others.
 */
import type { EncodingSettings, NumericEncoding } from '../core/configuration.js';
import { stream } from '../random/streams.js';
import { quantileOfSorted } from './numeric-inputs.js';

/** A numeric input's encoding in a recipe; absent: the input is one network input. */
export type NumericEncodingFit =
  | {
      kind: 'piecewise-linear';
      /** The bin edges b_0 < b_1 < ... < b_T, strictly increasing: T bins (one edge: a constant column, one input of 0). */
      edges: number[];
    }
  | {
      kind: 'periodic';
      /** The frequencies c_1..c_K: each gives a sine and a cosine input, in that order. */
      frequencies: number[];
    };

/** The bin edges of ascending values: training quantiles at t / bins, equal neighbours merged. */
export function quantileEdges(sorted: ArrayLike<number>, bins: number): number[] {
  const edges: number[] = [];
  if (sorted.length === 0) return [0];
  for (let t = 0; t <= bins; t++) {
    const edge = quantileOfSorted(sorted, t / bins);
    if (edges.length === 0 || edge > edges[edges.length - 1]!) edges.push(edge);
  }
  return edges;
}

/** One standard normal draw by Box-Muller from two uniforms of `rng` (the cosine branch). */
function standardNormal(rng: () => number): number {
  const u = 1 - rng();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng());
}

/**
 * The frequencies of numeric input `column` (its name): K draws from N(0, scale^2), from a stream
 * keyed by the study seed, the settings and the column, so every thread, machine and fold gets the same.
 */
export function periodicFrequencies(seed: number, settings: EncodingSettings, column: string): number[] {
  const rng = stream(seed, 'periodic-frequencies', settings.frequencies, settings.scale, column);
  return Array.from({ length: settings.frequencies }, () => settings.scale * standardNormal(rng));
}

/** Fits the encoding of one numeric input on its training values after scaling (any order). */
export function fitNumericEncoding(kind: Exclude<NumericEncoding, 'none'>, scaled: Float64Array, settings: EncodingSettings, seed: number, column: string): NumericEncodingFit {
  if (kind === 'periodic') return { kind, frequencies: periodicFrequencies(seed, settings, column) };
  return { kind, edges: quantileEdges(Float64Array.from(scaled).sort(), settings.bins) };
}

/** The network inputs one numeric input takes: 1 without encoding, T bins (at least 1), or 2K. */
export function encodedWidth(encoding: NumericEncodingFit | undefined): number {
  if (encoding === undefined) return 1;
  if (encoding.kind === 'periodic') return 2 * encoding.frequencies.length;
  return Math.max(1, encoding.edges.length - 1);
}

/** The piecewise-linear encoding's bin t (0-based) of x, as the file's comment defines it. */
export function binValue(edges: readonly number[], t: number, x: number): number {
  const bins = edges.length - 1;
  if (bins < 1) return 0;
  const low = edges[t]!;
  const high = edges[t + 1]!;
  if (t > 0 && x < low) return 0;
  if (t < bins - 1 && x >= high) return 1;
  return (x - low) / (high - low);
}

/** Writes the encoded inputs of scaled value x into `out` from `offset` on ({@link encodedWidth} of them). */
export function writeEncoded(encoding: NumericEncodingFit, x: number, out: Float32Array, offset: number): void {
  if (encoding.kind === 'periodic') {
    encoding.frequencies.forEach((c, k) => {
      const angle = 2 * Math.PI * c * x;
      out[offset + 2 * k] = Math.sin(angle);
      out[offset + 2 * k + 1] = Math.cos(angle);
    });
    return;
  }
  const width = encodedWidth(encoding);
  for (let t = 0; t < width; t++) out[offset + t] = binValue(encoding.edges, t, x);
}

/**
 * The largest number of network inputs an encoding gives a recipe with `numericColumns` numeric
 * columns and `otherInputs` other inputs (one-hot): what the first layer's width follows. With
 * piecewise-linear it is an upper bound (a column with few distinct values has fewer bins); a
 * fitted recipe's own `inputCount` is exact.
 */
export function encodedInputCount(numericColumns: number, otherInputs: number, encoding: NumericEncoding, settings: EncodingSettings): number {
  const perColumn = encoding === 'none' ? 1 : encoding === 'periodic' ? 2 * settings.frequencies : settings.bins;
  return numericColumns * perColumn + otherInputs;
}
