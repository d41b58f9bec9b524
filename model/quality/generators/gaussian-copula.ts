/**
 * A Gaussian copula over one class's records (the usual construction; e.g. Nelsen, "An Introduction
 * to Copulas", 2006, and Patki et al. 2016 for tabular data): each layout block is one variable (a
 * continuous feature, a category index, a presence bit) with its empirical marginal; the dependence
 * is the correlation matrix R of the variables' normal scores Φ⁻¹(rank / (n + 1)) (mid-ranks for
 * ties). A sample is g = L·ε with L the Cholesky factor of R and ε ~ N(0, I), pushed through Φ and
 * each variable's empirical inverse CDF.
 *
 * Continuous variables use the piecewise-linear inverse CDF through the order statistics (at
 * plotting positions (i + ½)/n), so samples fall between observed values instead of repeating them
 * coordinate by coordinate (which copies whole records of a small class); categories and presence use
 * the step inverse F⁻¹(u) = the smallest observed value with F ≥ u.
 */
import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import type { FeatureLayout } from '../../features/layout.js';
import { standardNormalCdf, standardNormalQuantile } from '../../features/normal.js';
import type { Prng } from '../../random.js';
import type { FeatureRows } from '../feature-rows.js';
import { pearsonMatrix } from '../metrics/correlation.js';

/**
 * Shrinkage steps towards the identity tried when R is not positive definite: R is only positive
 * semi-definite when the class has no more records than variables, or when variables are tied or
 * collinear. (1 − λ)·R + λ·I is a correlation matrix that is positive definite for any λ > 0 and
 * keeps R's sign pattern; the smallest λ that the Cholesky decomposition accepts is used.
 */
const SHRINKAGE_STEPS = [0, 1e-8, 1e-6, 1e-4, 1e-3, 1e-2, 0.05, 0.1, 0.25, 0.5, 1];

type Variable =
  | { readonly kind: 'continuous' | 'presence'; readonly offset: number }
  | { readonly kind: 'categorical'; readonly offset: number; readonly width: number };

export class GaussianCopula {
  private constructor(
    private readonly width: number,
    private readonly variables: readonly Variable[],
    /** Each variable's observed values, sorted ascending. */
    private readonly marginals: readonly Float64Array[],
    private readonly cholesky: Matrix,
    /** The λ that made R positive definite (0 when it already was). */
    readonly shrinkage: number,
  ) {}

  static fit(layout: FeatureLayout, rows: FeatureRows): GaussianCopula {
    const variables: Variable[] = layout.blocks.map((block) =>
      block.kind === 'categorical' ? { kind: 'categorical', offset: block.offset, width: block.width } : { kind: block.kind, offset: block.offset },
    );
    const m = variables.length;
    const observed = variables.map((variable) => Float64Array.from({ length: rows.count }, (_, r) => readVariable(variable, rows.values, r * rows.width)));
    const scores = new Float64Array(rows.count * m);
    observed.forEach((values, v) => {
      const ranks = midRanks(values);
      for (let r = 0; r < rows.count; r++) scores[r * m + v] = standardNormalQuantile(ranks[r]! / (rows.count + 1));
    });
    const correlation = pearsonMatrix(scores, m, Array.from({ length: m }, (_, v) => v));
    const { factor, shrinkage } = choleskyWithShrinkage(correlation);
    return new GaussianCopula(rows.width, variables, observed.map((values) => Float64Array.from(values).sort()), factor, shrinkage);
  }

  /** `count` feature rows drawn from the copula. */
  sample(count: number, prng: Prng): FeatureRows {
    const m = this.variables.length;
    const values = new Float32Array(count * this.width);
    const epsilon = new Float64Array(m);
    for (let s = 0; s < count; s++) {
      for (let v = 0; v < m; v++) epsilon[v] = prng.normal();
      this.variables.forEach((variable, v) => {
        let g = 0;
        for (let j = 0; j <= v; j++) g += this.cholesky.get(v, j) * epsilon[j]!;
        const u = standardNormalCdf(g);
        const marginal = this.marginals[v]!;
        const base = s * this.width + variable.offset;
        if (variable.kind === 'continuous') values[base] = interpolatedQuantile(marginal, u);
        else if (variable.kind === 'presence') values[base] = stepQuantile(marginal, u);
        else values[base + stepQuantile(marginal, u)] = 1;
      });
    }
    return { values, width: this.width, count };
  }
}

function readVariable(variable: Variable, values: Float32Array, base: number): number {
  if (variable.kind !== 'categorical') return values[base + variable.offset]!;
  let best = 0;
  for (let i = 1; i < variable.width; i++) if (values[base + variable.offset + i]! > values[base + variable.offset + best]!) best = i;
  return best;
}

/** 1-based ranks, ties given the mean of the ranks they span. */
function midRanks(values: Float64Array): Float64Array {
  const order = Array.from({ length: values.length }, (_, i) => i).sort((a, b) => values[a]! - values[b]!);
  const ranks = new Float64Array(values.length);
  for (let start = 0; start < order.length; ) {
    let end = start + 1;
    while (end < order.length && values[order[end]!] === values[order[start]!]) end++;
    for (let i = start; i < end; i++) ranks[order[i]!] = (start + 1 + end) / 2;
    start = end;
  }
  return ranks;
}

function choleskyWithShrinkage(correlation: number[][]): { factor: Matrix; shrinkage: number } {
  const m = correlation.length;
  for (const lambda of SHRINKAGE_STEPS) {
    const shrunk = new Matrix(correlation.map((row, i) => row.map((value, j) => (1 - lambda) * value + (i === j ? lambda : 0))));
    const decomposition = new CholeskyDecomposition(shrunk);
    if (decomposition.isPositiveDefinite()) return { factor: decomposition.lowerTriangularMatrix, shrinkage: lambda };
  }
  return { factor: Matrix.eye(m), shrinkage: 1 };
}

/** Linear between order statistics placed at (i + ½)/n, flat beyond the first and last. */
function interpolatedQuantile(sorted: Float64Array, u: number): number {
  const position = Math.min(sorted.length - 1, Math.max(0, u * sorted.length - 0.5));
  const below = Math.floor(position);
  const above = Math.min(sorted.length - 1, below + 1);
  return sorted[below]! + (position - below) * (sorted[above]! - sorted[below]!);
}

/** The smallest observed value whose empirical CDF reaches u. */
function stepQuantile(sorted: Float64Array, u: number): number {
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.ceil(u * sorted.length) - 1))]!;
}
