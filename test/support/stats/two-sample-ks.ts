/**
 * Two-sample Kolmogorov–Smirnov: D = sup_x |F_a(x) − F_b(x)| over the two empirical CDFs, and the
 * large-sample critical value at α = 0.05, c(α)·sqrt((n + m)/(n·m)) with c(0.05) = 1.36 (handbook
 * tables; see ../shared/REFERENCE-FACTS.md, "Two-sample Kolmogorov–Smirnov").
 */

/** The KS statistic; tied values step both CDFs together before the gap is measured. */
export function ksStatistic(a: readonly number[], b: readonly number[]): number {
  if (a.length === 0 || b.length === 0) throw new Error('ksStatistic needs two non-empty samples');
  const x = [...a].sort((p, q) => p - q);
  const y = [...b].sort((p, q) => p - q);
  let i = 0;
  let j = 0;
  let d = 0;
  while (i < x.length && j < y.length) {
    const value = Math.min(x[i]!, y[j]!);
    while (i < x.length && x[i] === value) i++;
    while (j < y.length && y[j] === value) j++;
    d = Math.max(d, Math.abs(i / x.length - j / y.length));
  }
  return d;
}

/** Reject "same distribution" at α = 0.05 when D exceeds this (large-sample approximation). */
export function ksCriticalValue05(n: number, m: number): number {
  return 1.36 * Math.sqrt((n + m) / (n * m));
}
