/**
 * The two-sample Kolmogorov–Smirnov statistic D = sup_x |F_a(x) − F_b(x)|, F the empirical CDFs.
 * Evaluated after every distinct value (both samples stepped past all their ties first), which is
 * what `scipy.stats.ks_2samp` reports as its statistic.
 */
export function ksStatistic(a: readonly number[], b: readonly number[]): number {
  if (a.length === 0 || b.length === 0) return a.length === b.length ? 0 : 1;
  const x = [...a].sort((p, q) => p - q);
  const y = [...b].sort((p, q) => p - q);
  let i = 0;
  let j = 0;
  let d = 0;
  while (i < x.length && j < y.length) {
    const value = Math.min(x[i]!, y[j]!);
    while (i < x.length && x[i]! <= value) i++;
    while (j < y.length && y[j]! <= value) j++;
    d = Math.max(d, Math.abs(i / x.length - j / y.length));
  }
  return d;
}
