/**
 * Pearson correlations between the columns of a row-major block, and the mean absolute difference
 * of two such matrices over the pairs above the diagonal. A column with no spread has no defined
 * correlation; it is given 0 with every other column (and 1 with itself), so a constant feature
 * counts as uncorrelated rather than breaking the comparison.
 */
export function pearsonMatrix(values: ArrayLike<number>, width: number, columns: readonly number[]): number[][] {
  const rows = width === 0 ? 0 : values.length / width;
  const m = columns.length;
  const means = columns.map((column) => {
    let sum = 0;
    for (let r = 0; r < rows; r++) sum += values[r * width + column]!;
    return rows === 0 ? 0 : sum / rows;
  });
  const products = Array.from({ length: m }, () => new Float64Array(m));
  const centred = new Float64Array(m);
  for (let r = 0; r < rows; r++) {
    for (let i = 0; i < m; i++) centred[i] = values[r * width + columns[i]!]! - means[i]!;
    for (let i = 0; i < m; i++) for (let j = i; j < m; j++) products[i]![j]! += centred[i]! * centred[j]!;
  }
  return Array.from({ length: m }, (_, i) =>
    Array.from({ length: m }, (_, j) => {
      if (i === j) return 1;
      const [a, b] = i < j ? [i, j] : [j, i];
      const denominator = Math.sqrt(products[a]![a]! * products[b]![b]!);
      return denominator > 0 ? Math.max(-1, Math.min(1, products[a]![b]! / denominator)) : 0;
    }),
  );
}

/** Mean |a_ij − b_ij| over i < j; 0 when there are fewer than two columns. */
export function meanAbsoluteCorrelationDifference(a: readonly (readonly number[])[], b: readonly (readonly number[])[]): number {
  let sum = 0;
  let pairs = 0;
  for (let i = 0; i < a.length; i++) {
    for (let j = i + 1; j < a.length; j++) {
      sum += Math.abs(a[i]![j]! - b[i]![j]!);
      pairs++;
    }
  }
  return pairs === 0 ? 0 : sum / pairs;
}
