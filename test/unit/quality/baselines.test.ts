/**
 * The baseline generators in the feature space, against their definitions: SMOTE (Chawla et al.
 * 2002, JAIR 16) and the Gaussian copula (x = L·z for z ~ N(0, I) has covariance L·Lᵀ, and
 * inverse-CDF sampling reproduces a marginal: shared/REFERENCE-FACTS.md, facts of the trade).
 */
import { describe, expect, it } from 'vitest';
import type { FeatureLayout } from '../../../model/features/layout.js';
import { standardNormalQuantile } from '../../../model/features/normal.js';
import type { FeatureRows } from '../../../model/quality/feature-rows.js';
import { GaussianCopula } from '../../../model/quality/generators/gaussian-copula.js';
import { smote, SMOTE_NEIGHBOURS } from '../../../model/quality/generators/smote.js';
import { pearsonMatrix } from '../../../model/quality/metrics/correlation.js';
import { ksStatistic } from '../../../model/quality/metrics/ks.js';
import { createPrng } from '../../../model/random.js';

const rowsOf = (points: readonly (readonly number[])[]): FeatureRows => ({ values: Float32Array.from(points.flat()), width: points[0]!.length, count: points.length });
const row = (rows: FeatureRows, i: number) => Array.from(rows.values.subarray(i * rows.width, (i + 1) * rows.width));
const distance = (a: readonly number[], b: readonly number[]) => Math.hypot(...a.map((v, i) => v - b[i]!));

describe('SMOTE', () => {
  const prng = createPrng(3);
  const points = Array.from({ length: 40 }, () => [prng.normal(), prng.normal(), prng.normal()]);
  const samples = rowsOf(points);

  it('makes k points per sample, each on the segment to one of its 5 nearest same-class neighbours', () => {
    const made = smote(samples, 4, createPrng(9));
    expect(made.rows.count).toBe(160);
    for (let s = 0; s < made.rows.count; s++) {
      const source = made.sources[s]!;
      expect(source).toBe(Math.floor(s / 4));
      const x = points[source]!;
      const nearest = points
        .map((p, j) => ({ j, d: distance(p, x) }))
        .filter(({ j }) => j !== source)
        .sort((a, b) => a.d - b.d)
        .slice(0, SMOTE_NEIGHBOURS);
      const point = row(made.rows, s);
      // On the segment x + u·(n − x), u in [0, 1], for some neighbour n (float32 tolerance).
      const onSomeSegment = nearest.some(({ j }) => {
        const direction = points[j]!.map((v, f) => v - x[f]!);
        const u = point.reduce((sum, v, f) => sum + (v - x[f]!) * direction[f]!, 0) / direction.reduce((sum, v) => sum + v * v, 0);
        return u >= -1e-6 && u <= 1 + 1e-6 && distance(point, x.map((v, f) => v + u * direction[f]!)) < 1e-5;
      });
      expect(onSomeSegment).toBe(true);
    }
  });

  it('repeats a lone sample, which has no neighbour', () => {
    const made = smote(rowsOf([[1.5, -2]]), 3, createPrng(1));
    expect([0, 1, 2].map((i) => row(made.rows, i))).toEqual([[1.5, -2], [1.5, -2], [1.5, -2]]);
  });
});

describe('GaussianCopula', () => {
  // Three variables: two correlated continuous features and a 3-way category (one-hot at 2–4).
  const layout: FeatureLayout = {
    width: 5,
    blocks: [
      { kind: 'continuous', path: 'a', offset: 0, width: 1 },
      { kind: 'continuous', path: 'b', offset: 1, width: 1 },
      { kind: 'categorical', path: 'c', offset: 2, width: 3, categories: ['x', 'y', 'z'] },
    ],
  };
  const prng = createPrng(21);
  const real = rowsOf(
    Array.from({ length: 2000 }, () => {
      const z1 = prng.normal();
      const z2 = 0.8 * z1 + 0.6 * prng.normal();
      const category = prng.uniform() < 0.6 ? 0 : prng.uniform() < 0.75 ? 1 : 2;
      return [Math.exp(z1), 3 * z2 + 1, ...[0, 1, 2].map((c) => (c === category ? 1 : 0))];
    }),
  );
  const copula = GaussianCopula.fit(layout, real);
  const drawn = copula.sample(4000, createPrng(22));
  const column = (rows: FeatureRows, f: number) => Array.from({ length: rows.count }, (_, r) => rows.values[r * rows.width + f]!);

  it('keeps each marginal (two-sample KS under the α = 0.05 critical value)', () => {
    // Critical value 1.36·sqrt((n + m)/(n·m)) ≈ 0.037 for 2,000 and 4,000 (shared/REFERENCE-FACTS.md).
    const critical = 1.36 * Math.sqrt((2000 + 4000) / (2000 * 4000));
    expect(copula.shrinkage).toBe(0);
    expect(ksStatistic(column(drawn, 0), column(real, 0))).toBeLessThan(critical);
    expect(ksStatistic(column(drawn, 1), column(real, 1))).toBeLessThan(critical);
    const share = (rows: FeatureRows, c: number) => column(rows, 2 + c).filter((v) => v === 1).length / rows.count;
    for (const c of [0, 1, 2]) expect(Math.abs(share(drawn, c) - share(real, c))).toBeLessThan(0.03);
    // Every drawn category block is one-hot.
    const [x, y, z] = [column(drawn, 2), column(drawn, 3), column(drawn, 4)];
    expect(x.every((v, r) => v + y[r]! + z[r]! === 1)).toBe(true);
  });

  it('keeps the dependence: the normal scores of a and b correlate at about 0.8', () => {
    // a = exp(z1) is monotone in z1, so Φ⁻¹ of a's ranks recovers z1; corr(z1, z2) = 0.8 by construction.
    const normalScores = (values: number[]) => {
      const order = values.map((v, i) => ({ v, i })).sort((p, q) => p.v - q.v);
      const scores = new Array<number>(values.length);
      order.forEach(({ i }, rank) => (scores[i] = standardNormalQuantile((rank + 1) / (values.length + 1))));
      return scores;
    };
    const a = normalScores(column(drawn, 0));
    const b = normalScores(column(drawn, 1));
    const correlation = pearsonMatrix(a.flatMap((v, i) => [v, b[i]!]), 2, [0, 1])[0]![1]!;
    expect(correlation).toBeGreaterThan(0.75);
    expect(correlation).toBeLessThan(0.85);
  });

  it('shrinks a correlation matrix that is not positive definite, and still samples', () => {
    // Two records, three variables: the normal scores have rank 1.
    const tiny = GaussianCopula.fit(layout, rowsOf([[1, 2, 1, 0, 0], [2, 4, 0, 1, 0]]));
    expect(tiny.shrinkage).toBeGreaterThan(0);
    const draws = tiny.sample(50, createPrng(5));
    for (let r = 0; r < 50; r++) {
      const [a, b] = row(draws, r);
      expect(a).toBeGreaterThanOrEqual(1);
      expect(a).toBeLessThanOrEqual(2);
      expect(b).toBeGreaterThanOrEqual(2);
      expect(b).toBeLessThanOrEqual(4);
    }
  });
});
