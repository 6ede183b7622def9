/** The part of d3-array (no types shipped) the preprocessing tests use as their reference. */
declare module 'd3-array' {
  /** The p-quantile of ascending values, by linear interpolation between order statistics. */
  export function quantileSorted(values: ArrayLike<number>, p: number): number | undefined;
}
