/**
 * Total variation distance between the category frequencies of two samples:
 * ½ Σ_c |p_a(c) − p_b(c)|, in [0, 1] (0 = same frequencies, 1 = no category in common).
 */
export function totalVariationDistance(a: readonly string[], b: readonly string[]): number {
  if (a.length === 0 || b.length === 0) return a.length === b.length ? 0 : 1;
  const shares = new Map<string, number>();
  for (const value of a) shares.set(value, (shares.get(value) ?? 0) + 1 / a.length);
  for (const value of b) shares.set(value, (shares.get(value) ?? 0) - 1 / b.length);
  let sum = 0;
  for (const difference of shares.values()) sum += Math.abs(difference);
  return Math.min(1, sum / 2);
}
