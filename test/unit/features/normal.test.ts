import { describe, expect, it } from 'vitest';
import { standardNormalCdf, standardNormalQuantile } from '../../../model/features/normal.js';

describe('standard normal quantile Φ⁻¹ (Wichura AS 241)', () => {
  // Handbook normal tables (any statistics handbook; ../shared/REFERENCE-FACTS.md "Normal quantiles").
  it.each([
    [0.975, 1.959964],
    [0.95, 1.644854],
    [0.99, 2.326348],
    [0.5, 0],
  ])('Φ⁻¹(%f) = %f', (p, z) => {
    expect(standardNormalQuantile(p)).toBeCloseTo(z, 6);
    expect(standardNormalQuantile(1 - p)).toBeCloseTo(-z, 6);
  });

  it('is ±Infinity at the ends and NaN for NaN', () => {
    expect(standardNormalQuantile(0)).toBe(Number.NEGATIVE_INFINITY);
    expect(standardNormalQuantile(1)).toBe(Number.POSITIVE_INFINITY);
    expect(standardNormalQuantile(Number.NaN)).toBeNaN();
  });
});

describe('standard normal distribution function Φ (Cody, Algorithm 715)', () => {
  // Handbook normal table values, 4–5 decimals (from memory of the standard table; Φ(Φ⁻¹(p)) below is the strict check).
  it.each([
    [0, 0.5],
    [1, 0.8413],
    [1.96, 0.975],
    [2, 0.97725],
    [3, 0.99865],
  ])('Φ(%f) ≈ %f', (x, p) => {
    expect(standardNormalCdf(x)).toBeCloseTo(p, 4);
    expect(standardNormalCdf(-x)).toBeCloseTo(1 - p, 4);
  });

  it('inverts Φ⁻¹ to ~1e-13 relative (or a few ulps of 1) from p = 1e-300 to 1 − 1e-12', () => {
    const probabilities: number[] = [];
    for (let i = 1; i < 10_000; i++) probabilities.push(i / 10_000);
    for (let k = 1; k <= 300; k += 7) probabilities.push(10 ** -k);
    for (let k = 1; k <= 12; k++) probabilities.push(1 - 10 ** -k);
    for (const p of probabilities) {
      const back = standardNormalCdf(standardNormalQuantile(p));
      // Relative to the smaller tail, where the information is; near 1 a double only resolves ~1e-16.
      const tail = Math.min(p, 1 - p);
      expect(Math.abs(back - p)).toBeLessThanOrEqual(Math.max((p < 1e-100 ? 1e-11 : 1e-13) * tail, 4.5e-16));
    }
  });

  it('is monotone, 0 and 1 at ±Infinity, and NaN for NaN', () => {
    let previous = 0;
    for (let x = -40; x <= 40; x += 0.01) {
      const p = standardNormalCdf(x);
      expect(p).toBeGreaterThanOrEqual(previous);
      previous = p;
    }
    expect(standardNormalCdf(Number.NEGATIVE_INFINITY)).toBe(0);
    expect(standardNormalCdf(Number.POSITIVE_INFINITY)).toBe(1);
    expect(standardNormalCdf(Number.NaN)).toBeNaN();
  });
});
