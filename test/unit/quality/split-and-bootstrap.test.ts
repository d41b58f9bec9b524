/** The stratified split, the stratified bootstrap and the histogram bins, on hand-built cases. */
import { describe, expect, it } from 'vitest';
import type { AvroRecord } from '../../../model/features/avro-types.js';
import { evaluationStream } from '../../../model/quality/evaluation-streams.js';
import { bootstrapInterval, stratifiedResamples } from '../../../model/quality/metrics/bootstrap.js';
import { histogram, sharedEdges } from '../../../model/quality/plot-distributions.js';
import { countByClass, splitTrainHoldout } from '../../../model/quality/split.js';

const records = (counts: Record<string, number>) =>
  Object.entries(counts).flatMap(([className, count]) => Array.from({ length: count }, (_, i) => ({ record: { i } as AvroRecord, className })));

describe('splitTrainHoldout', () => {
  const input = records({ calm: 400, squall: 13, gale: 2, hurricane: 1 });

  it('holds out round(share · n) of each class, at least one and never all of a class of two or more', () => {
    const { train, holdout } = splitTrainHoldout(input, 3, 0.25);
    // 400 → 100; 13 → round(3.25) = 3; 2 → 1 (at least one, never all); 1 → 0 (stays to be learned).
    expect(countByClass(holdout)).toEqual({ calm: 100, squall: 3, gale: 1 });
    expect(countByClass(train)).toEqual({ calm: 300, squall: 10, gale: 1, hurricane: 1 });
  });

  it('is the same for the same seed and differs for another', () => {
    const pick = (seed: number) => splitTrainHoldout(input, seed, 0.25).holdout.map(({ record }) => (record as { i: number }).i);
    expect(pick(3)).toEqual(pick(3));
    expect(pick(3)).not.toEqual(pick(4));
  });
});

describe('stratified bootstrap', () => {
  const strata = [0, 0, 0, 0, 0, 0, 1, 1, 2];
  const resamples = stratifiedResamples(strata, 200, (b) => evaluationStream(1, 'bootstrap', b));

  it('redraws each stratum to its own size, so class shares never change', () => {
    for (const weights of resamples) {
      const perStratum = [0, 0, 0];
      strata.forEach((stratum, i) => (perStratum[stratum]! += weights[i]!));
      expect(perStratum).toEqual([6, 2, 1]);
    }
  });

  it('gives the full-sample estimate with the 2.5th and 97.5th percentiles of the resampled statistic', () => {
    const values = [1, 2, 3, 4, 5, 6, 10, 20, 7];
    const weightedMean = (weights?: ArrayLike<number>) => {
      let sum = 0;
      let total = 0;
      values.forEach((v, i) => {
        const w = weights === undefined ? 1 : weights[i]!;
        sum += w * v;
        total += w;
      });
      return sum / total;
    };
    const interval = bootstrapInterval(weightedMean, resamples);
    expect(interval.estimate).toBeCloseTo(58 / 9, 12);
    expect(interval.low).toBeLessThan(interval.estimate);
    expect(interval.high).toBeGreaterThan(interval.estimate);
    // The stratum of one (7) always stays; stratum 1 draws from {10, 20}: the bounds stay inside what resamples can give.
    expect(interval.low).toBeGreaterThanOrEqual((6 * 1 + 2 * 10 + 7) / 9);
    expect(interval.high).toBeLessThanOrEqual((6 * 6 + 2 * 20 + 7) / 9);
  });
});

describe('histogram bins', () => {
  it('share equal-width edges over every value shown, the last bin closed on the right', () => {
    const edges = sharedEdges([[0, 5], [10]]);
    expect(edges).toHaveLength(21);
    expect(edges[0]).toBe(0);
    expect(edges[20]).toBe(10);
    // Bins of width 0.5: 0 → bin 0, 0.5 → bin 1 (left-closed), 9.99 and 10 → bin 19.
    const counts = histogram([0, 0.5, 9.99, 10], edges);
    expect(counts[0]).toBe(1);
    expect(counts[1]).toBe(1);
    expect(counts[19]).toBe(2);
    expect(counts.reduce((a, b) => a + b, 0)).toBe(4);
  });

  it('gives a single value a bin of its own', () => {
    expect(sharedEdges([[3, 3], [3]])).toEqual([2.5, 3.5]);
  });
});
