/**
 * The quantile transform (`normal-quantiles`) in the ONNX graph, as elementwise operators only: the
 * piecewise-linear map through a column's K knots is base + sum over its K - 1 segments j of
 * (min(max(x, lo_j), hi_j) - lo_j) x slope_j, which is exactly the interpolation (constant beyond the
 * ends). Every quantile input is copied once per segment by a MatMul with a 0/1 matrix, the segments
 * are clamped and weighted elementwise (Max, Min, Sub, Mul), and a second 0/1 MatMul sums each
 * input's segments back into its place; base is the first knot's score. Inputs that are not quantile
 * inputs get 0 here (their own value comes through the standardising nodes, which give a quantile input 0).
 */
import type { PreprocessingRecipe } from '../data/types.js';
import { categoricalWidth, rawInputCount } from '../data/recipe.js';
import type { NodeSpec, TensorSpec } from './onnx-nodes.js';

interface Segment {
  input: number;
  lo: number;
  hi: number;
  slope: number;
}

/** The segments of every quantile input (at least one each: a constant column's is flat), and each input's base. */
function quantileSegments(recipe: PreprocessingRecipe): { segments: Segment[]; base: Float32Array } {
  const segments: Segment[] = [];
  const base = new Float32Array(rawInputCount(recipe));
  let input = 0;
  for (const feature of recipe.features) {
    if (feature.kind === 'categorical') {
      input += categoricalWidth(feature);
      continue;
    }
    const transform = feature.transform;
    if (transform?.kind === 'normal-quantiles') {
      const { knots, scores } = transform;
      base[input] = scores[0] ?? 0;
      for (let j = 0; j + 1 < knots.length; j++) {
        segments.push({ input, lo: knots[j]!, hi: knots[j + 1]!, slope: (scores[j + 1]! - scores[j]!) / (knots[j + 1]! - knots[j]!) });
      }
      if (knots.length < 2) segments.push({ input, lo: knots[0] ?? 0, hi: knots[0] ?? 0, slope: 0 });
    }
    input += 1;
  }
  return { segments, base };
}

/** Adds the quantile transform to `x` (rows x inputs); returns the output's name (`x` itself without quantile inputs). */
export function quantileNodes(recipe: PreprocessingRecipe, x: string, nodes: NodeSpec[], tensors: TensorSpec[]): string {
  const { segments, base } = quantileSegments(recipe);
  if (segments.length === 0) return x;
  const inputs = rawInputCount(recipe);
  const count = segments.length;
  const spread = new Float32Array(inputs * count);
  const gather = new Float32Array(count * inputs);
  segments.forEach((segment, j) => {
    spread[segment.input * count + j] = 1;
    gather[j * inputs + segment.input] = 1;
  });
  tensors.push(
    { name: 'quantile_spread', dims: [inputs, count], values: spread },
    { name: 'quantile_lo', dims: [count], values: Float32Array.from(segments, (s) => s.lo) },
    { name: 'quantile_hi', dims: [count], values: Float32Array.from(segments, (s) => s.hi) },
    { name: 'quantile_slope', dims: [count], values: Float32Array.from(segments, (s) => s.slope) },
    { name: 'quantile_gather', dims: [count, inputs], values: gather },
    { name: 'quantile_base', dims: [inputs], values: base },
  );
  nodes.push(
    { opType: 'MatMul', input: ['filled', 'quantile_spread'], output: ['quantile_copies'] },
    { opType: 'Max', input: ['quantile_copies', 'quantile_lo'], output: ['quantile_above'] },
    { opType: 'Min', input: ['quantile_above', 'quantile_hi'], output: ['quantile_within'] },
    { opType: 'Sub', input: ['quantile_within', 'quantile_lo'], output: ['quantile_run'] },
    { opType: 'Mul', input: ['quantile_run', 'quantile_slope'], output: ['quantile_rise'] },
    { opType: 'MatMul', input: ['quantile_rise', 'quantile_gather'], output: ['quantile_sum'] },
    { opType: 'Add', input: ['quantile_sum', 'quantile_base'], output: ['quantile_scores'] },
    { opType: 'Add', input: [x, 'quantile_scores'], output: ['quantile_out'] },
  );
  return 'quantile_out';
}
