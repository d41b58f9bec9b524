import { describe, expect, it } from 'vitest';
import { buildMarginal, EmpiricalMarginal } from '../../../model/features/marginal.js';
import { standardNormalQuantile } from '../../../model/features/normal.js';
import { seededRandom } from '../../support/seeded-random.js';

/** Encodes to a float32 feature, as the codec stores it, and decodes back. */
function roundTrip(marginal: EmpiricalMarginal, x: number): number {
  return marginal.decode(Math.fround(marginal.encode(x)));
}

function expectRelativelyEqual(actual: number, expected: number): void {
  expect(Math.abs(actual - expected)).toBeLessThanOrEqual(1e-9 * Math.abs(expected));
}

/** Largest gap between two empirical CDFs (two-sample Kolmogorov–Smirnov statistic). */
function ksDistance(a: readonly number[], b: readonly number[]): number {
  const x = [...a].sort((p, q) => p - q);
  const y = [...b].sort((p, q) => p - q);
  let i = 0;
  let j = 0;
  let distance = 0;
  while (i < x.length && j < y.length) {
    const value = Math.min(x[i]!, y[j]!);
    while (i < x.length && x[i]! <= value) i++;
    while (j < y.length && y[j]! <= value) j++;
    distance = Math.max(distance, Math.abs(i / x.length - j / y.length));
  }
  return distance;
}

/** Decodes evenly spaced probabilities: the distribution the codec reproduces from uniform latent draws. */
function decodedDistribution(marginal: EmpiricalMarginal, points: number): number[] {
  return Array.from({ length: points }, (_, i) => marginal.decode(standardNormalQuantile((i + 0.5) / points)));
}

describe('empirical marginal', () => {
  const random = seededRandom(7);
  const continuous = Array.from({ length: 1000 }, () => 1000 * Math.exp(3 * random()) - 990);
  const zeroInflated = Array.from({ length: 1000 }, () => (random() < 0.6 ? 0 : Math.round(random() * 300) / 10));
  const discrete = Array.from({ length: 1000 }, () => Math.floor(random() * 6));

  it.each([
    ['all-distinct doubles', continuous],
    ['60 % zeros then tenths', zeroInflated],
    ['six integer levels', discrete],
    ['one constant value', [42, 42, 42]],
    ['a single value', [-3.5]],
    ['tiny and huge magnitudes', [1e-300, -1e-300, 0, 1e300, -1e300, 5e-324, 1.5]],
  ])('decode(encode(x)) = x to 1e-9 relative for every sample value: %s', (_name, sample) => {
    const marginal = new EmpiricalMarginal(buildMarginal(sample, 1024));
    for (const x of sample) expectRelativelyEqual(roundTrip(marginal, x), x);
  });

  it('keeps every decode within the observed range, whatever the feature', () => {
    const marginal = new EmpiricalMarginal(buildMarginal(continuous, 1024));
    for (const z of [Number.NEGATIVE_INFINITY, -1e30, -40, -8, 0, 8, 40, 1e30, Number.POSITIVE_INFINITY, Number.NaN]) {
      const x = marginal.decode(z);
      expect(x).toBeGreaterThanOrEqual(marginal.min);
      expect(x).toBeLessThanOrEqual(marginal.max);
    }
    expect(marginal.decode(Number.NEGATIVE_INFINITY)).toBe(Math.min(...continuous));
    expect(marginal.decode(Number.POSITIVE_INFINITY)).toBe(Math.max(...continuous));
    // Values outside the sample encode like its extremes.
    expect(marginal.encode(-1e9)).toBe(marginal.encode(marginal.min));
    expect(marginal.encode(Number.POSITIVE_INFINITY)).toBe(marginal.encode(marginal.max));
  });

  it('is monotone both ways, interpolating between knots', () => {
    const marginal = new EmpiricalMarginal(buildMarginal(zeroInflated, 1024));
    const scores = Array.from({ length: 2500 }, (_, i) => marginal.encode(-1 + i * 0.013));
    const values = Array.from({ length: 10_001 }, (_, i) => marginal.decode(-5 + i * 0.001));
    expect(scores.every((z, i) => i === 0 || z >= scores[i - 1]!)).toBe(true);
    expect(values.every((x, i) => i === 0 || x >= values[i - 1]!)).toBe(true);
    expect(new Set(values).size).toBeGreaterThan(1000);
  });

  it('reproduces the sample distribution from uniform latent draws (KS distance ≤ 2/n)', () => {
    for (const sample of [continuous, zeroInflated, discrete]) {
      const marginal = new EmpiricalMarginal(buildMarginal(sample, 1024));
      expect(ksDistance(decodedDistribution(marginal, 20_000), sample)).toBeLessThanOrEqual(2 / sample.length);
    }
  });

  it('keeps a repeated value as an atom of its share (60 % zeros decode to exactly 0 about 60 % of the time)', () => {
    const marginal = new EmpiricalMarginal(buildMarginal(zeroInflated, 1024));
    const zeroShare = zeroInflated.filter((x) => x === 0).length / zeroInflated.length;
    const decodedZeros = decodedDistribution(marginal, 20_000).filter((x) => x === 0).length / 20_000;
    expect(Math.abs(decodedZeros - zeroShare)).toBeLessThan(0.002);
  });

  describe('with more distinct values than knots', () => {
    const large = Array.from({ length: 20_000 }, () => (random() < 0.1 ? 5 : random() * 100));
    const json = buildMarginal(large, 64);
    const marginal = new EmpiricalMarginal(json);

    it('stores at most the knot budget, including min, max and the heavy value', () => {
      expect(json.values.length).toBeLessThanOrEqual(64);
      expect(json.distinct).toBeGreaterThan(15_000);
      expect(json.values[0]).toBe(Math.min(...large));
      expect(json.values[json.values.length - 1]).toBe(Math.max(...large));
      expect(json.values).toContain(5);
      expectRelativelyEqual(roundTrip(marginal, 5), 5);
    });

    it('still follows the data (KS distance ≤ 2/knots) and round-trips unstored values approximately', () => {
      expect(ksDistance(decodedDistribution(marginal, 20_000), large)).toBeLessThanOrEqual(2 / 64);
      for (const x of large.slice(0, 500)) expect(Math.abs(roundTrip(marginal, x) - x)).toBeLessThan(1e-3);
    });
  });
});
