/**
 * The q-th percentile (q in [0, 100]) by linear interpolation between closest ranks: with the
 * values sorted ascending as v_0 … v_(n−1), position h = (n − 1)·q/100 and the result
 * v_⌊h⌋ + (h − ⌊h⌋)(v_⌊h⌋+1 − v_⌊h⌋). This is Hyndman & Fan's definition 7, numpy's default.
 * NaN for an empty sample.
 */
export function percentile(values: ArrayLike<number>, q: number): number {
  return percentileOfSorted(Float64Array.from(values).sort(), q);
}

/** `percentile` of values already sorted ascending. */
export function percentileOfSorted(sorted: ArrayLike<number>, q: number): number {
  if (sorted.length === 0) return Number.NaN;
  const position = ((sorted.length - 1) * q) / 100;
  const below = Math.floor(position);
  const above = Math.min(sorted.length - 1, below + 1);
  return sorted[below]! + (position - below) * (sorted[above]! - sorted[below]!);
}
