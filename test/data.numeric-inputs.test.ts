import { quantileSorted } from 'd3-array';
import * as tf from '@tensorflow/tfjs';
import { describe, expect, it } from 'vitest';
import { applyNumericTransform, fitNumericTransform, normalQuantile, quantileOfSorted, smoothClip, type NumericTransform } from '../src/data/numeric-inputs.js';
import { buildRecipe, encodeFeatures } from '../src/data/recipe.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';

/** A fixed, skewed sample with ties and an outlier (invented for the check, not data). */
function sample(count: number): Float64Array {
  let seed = 987654321;
  const next = (): number => (seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31;
  return Float64Array.from({ length: count }, (_, i) => (i === 7 ? 1e6 : i % 10 === 0 ? 2 : Math.exp(3 * next())));
}

describe('quantiles of the training values', () => {
  it('agree with d3-array quantileSorted at every percentile', () => {
    // Source: d3-array 3.2.5 quantileSorted (R-7: Hyndman and Fan, "Sample Quantiles in Statistical Packages", 1996, definition 7).
    const sorted = sample(257).sort();
    for (let k = 0; k <= 100; k++) expect(quantileOfSorted(sorted, k / 100)).toBeCloseTo(quantileSorted(sorted, k / 100)!, 9);
  });
});

describe('the standard normal quantile function', () => {
  it('gives the tabulated percentage points', () => {
    // From memory (standard normal tables, to 9 digits): 0.5 -> 0, 0.95 -> 1.644853627, 0.975 -> 1.959963985, 0.99 -> 2.326347874, 0.999 -> 3.090232306.
    const table: [number, number][] = [[0.5, 0], [0.95, 1.644853627], [0.975, 1.959963985], [0.99, 2.326347874], [0.999, 3.090232306], [0.0001, -3.719016485]];
    for (const [p, z] of table) expect(normalQuantile(p)).toBeCloseTo(z, 8);
  });

  it('inverts the normal distribution function computed with tfjs erf, over the whole range used', async () => {
    // Source: Phi(z) = (1 + erf(z / sqrt 2)) / 2, erf from tfjs (tf.erf, float32), the reference library.
    await initBackend();
    const ps = [1e-6, 1e-4, 0.01, 0.05, 0.2, 0.4, 0.5, 0.6, 0.8, 0.95, 0.99, 0.9999];
    const z = Float32Array.from(ps, (p) => normalQuantile(p) / Math.SQRT2);
    const erf = tf.tidy(() => tf.erf(tf.tensor1d(z)).dataSync());
    ps.forEach((p, i) => expect(Math.abs((1 + erf[i]!) / 2 - p)).toBeLessThan(2e-7 + 2e-6 * p));
  });

  it('keeps probabilities inside [1e-7, 1 - 1e-7]', () => {
    expect(normalQuantile(0)).toBe(normalQuantile(1e-7));
    expect(normalQuantile(1)).toBe(normalQuantile(1 - 1e-7));
    expect(normalQuantile(1)).toBeCloseTo(5.199337582, 6); // From memory: the normal's 1 - 1e-7 point.
  });
});

describe('robust scaling with smooth clipping', () => {
  // Source: Holzmüller, Grinsztajn, Steinwart, "Better by Default", NeurIPS 2024, RealMLP preprocessing:
  // z = (x - median) / (q75 - q25), half the range when that is 0, then z / sqrt(1 + (z / 3)^2); quantiles from d3-array.
  const reference = (values: Float64Array, x: number): number => {
    const sorted = Float64Array.from(values).sort();
    let spread = quantileSorted(sorted, 0.75)! - quantileSorted(sorted, 0.25)!;
    if (spread === 0) spread = 0.5 * (sorted[sorted.length - 1]! - sorted[0]!);
    if (spread === 0) return 0;
    const z = (x - quantileSorted(sorted, 0.5)!) / spread;
    return z / Math.sqrt(1 + (z / 3) ** 2);
  };

  it('matches the paper formula on a skewed column with an outlier', () => {
    const values = sample(300);
    const transform = fitNumericTransform('robust-clip', values);
    for (const x of [-5, 0, 2, 3.3, 10, 25, 1e6]) expect(applyNumericTransform(transform, x)).toBeCloseTo(reference(values, x), 12);
    // The outlier stays below the clip.
    expect(applyNumericTransform(transform, 1e6)).toBeLessThan(3);
    expect(applyNumericTransform(transform, 1e6)).toBeGreaterThan(2.99);
  });

  it('works a small example: 1, 2, 3, 4, 100 gives median 3, IQR 2, and 100 -> 2.99427', () => {
    const transform = fitNumericTransform('robust-clip', Float64Array.of(100, 3, 1, 4, 2));
    expect(transform).toEqual({ kind: 'robust-clip', centre: 3, scale: 2 });
    // Derived from the formula: z = 48.5, 48.5 / sqrt(1 + (48.5 / 3)^2) = 2.994277.
    expect(applyNumericTransform(transform, 100)).toBeCloseTo(2.994277, 5);
    expect(smoothClip(3)).toBeCloseTo(3 / Math.SQRT2, 12);
  });

  it('falls back to half the range when the quartiles are equal, and gives 0 for a constant column', () => {
    const halfRange = fitNumericTransform('robust-clip', Float64Array.of(0, 0, 0, 0, 0, 10));
    expect(halfRange).toEqual({ kind: 'robust-clip', centre: 0, scale: 5 });
    expect(applyNumericTransform(halfRange, 10)).toBeCloseTo(reference(Float64Array.of(0, 0, 0, 0, 0, 10), 10), 12);
    const constant = fitNumericTransform('robust-clip', Float64Array.of(4, 4, 4));
    expect(applyNumericTransform(constant, 4)).toBe(0);
    expect(applyNumericTransform(constant, 400)).toBe(0);
  });
});

describe('quantile transform to a normal shape', () => {
  const values = sample(2000);
  const transform = fitNumericTransform('normal-quantiles', values) as Extract<NumericTransform, { kind: 'normal-quantiles' }>;

  it('puts each training quantile at the normal quantile of its probability', () => {
    // Common practice (no source) for the transform; quantiles from d3-array, the normal's from the table above.
    const untied = sample(2000).filter((_, i) => i % 10 !== 0);
    const own = fitNumericTransform('normal-quantiles', untied);
    const sorted = Float64Array.from(untied).sort();
    for (const p of [0.05, 0.25, 0.5, 0.75, 0.9]) {
      const knot = quantileSorted(sorted, p)!;
      expect(applyNumericTransform(own, knot)).toBeCloseTo(normalQuantile(p), 6);
    }
    expect(applyNumericTransform(own, quantileSorted(sorted, 0.97)!)).toBeCloseTo(1.880793608, 6); // From memory: the normal's 0.97 point.
  });

  it('gives the training rows roughly a standard normal shape, whatever the column looked like', () => {
    const scores = Array.from(values, (v) => applyNumericTransform(transform, v)).filter((_, i) => i % 10 !== 0); // the tied 2s sit on one knot
    const mean = scores.reduce((a, b) => a + b, 0) / scores.length;
    const sd = Math.sqrt(scores.reduce((a, b) => a + (b - mean) ** 2, 0) / scores.length);
    expect(Math.abs(mean)).toBeLessThan(0.1);
    expect(sd).toBeGreaterThan(0.85);
    expect(sd).toBeLessThan(1.15);
  });

  it('merges tied quantiles into one knot, stays monotone and constant beyond the ends', () => {
    expect(transform.knots.length).toBeLessThan(101);
    for (let i = 1; i < transform.knots.length; i++) {
      expect(transform.knots[i]!).toBeGreaterThan(transform.knots[i - 1]!);
      expect(transform.scores[i]!).toBeGreaterThan(transform.scores[i - 1]!);
    }
    expect(applyNumericTransform(transform, -1e9)).toBe(transform.scores[0]);
    expect(applyNumericTransform(transform, 1e9)).toBe(transform.scores.at(-1));
    expect(transform.scores[0]).toBeCloseTo(-5.199337582, 6);
  });
});

describe('preprocessing choices in a recipe', () => {
  const features = [
    { name: 'size', kind: 'numeric' as const },
    { name: 'colour', kind: 'categorical' as const },
  ];
  const training = [
    { size: '1', colour: 'red', label: 'yes' },
    { size: '2', colour: 'blue', label: 'no' },
    { size: '3', colour: 'red', label: 'yes' },
    { size: '4', colour: 'red', label: 'yes' },
    { size: '100', colour: 'green', label: 'no' },
  ];

  it('standardises and keeps every category by default, with no new keys in the recipe', () => {
    const recipe = buildRecipe({ task: 'binary', target: 'label', features, trainingRows: training });
    const again = buildRecipe({ task: 'binary', target: 'label', features, trainingRows: training, preprocessing: { numericInputs: 'standardise', poolCategoriesBelow: 0 } });
    expect(JSON.stringify(again)).toBe(JSON.stringify(recipe));
    expect(JSON.stringify(recipe)).not.toMatch(/transform|pooled/);
  });

  it('pools categories seen in fewer training rows than the threshold into one input, with unseen ones', () => {
    const recipe = buildRecipe({ task: 'binary', target: 'label', features, trainingRows: training, preprocessing: { numericInputs: 'robust-clip', poolCategoriesBelow: 2 } });
    expect(recipe.features[1]).toEqual({ kind: 'categorical', name: 'colour', categories: ['red'], fill: 'red', pooled: ['blue', 'green'] });
    expect(recipe.inputCount).toBe(3);
    const x = encodeFeatures(recipe, [{ size: '100', colour: 'green' }, { size: '', colour: 'purple' }, { size: '3', colour: '' }], 'rows.csv');
    // Source: Holzmüller et al. 2024 formula: median 3, IQR 2, z(100) = 48.5 -> 2.994277; a missing size takes the mean 22 -> z 9.5.
    expect(x[0]).toBeCloseTo(2.994277, 5);
    expect(Array.from(x.subarray(1, 3))).toEqual([0, 1]);
    expect(x[3]).toBeCloseTo(9.5 / Math.sqrt(1 + (9.5 / 3) ** 2), 6);
    expect(Array.from(x.subarray(4, 6))).toEqual([0, 1]);
    expect(x[6]).toBe(0);
    expect(Array.from(x.subarray(7, 9))).toEqual([1, 0]);
  });
});
