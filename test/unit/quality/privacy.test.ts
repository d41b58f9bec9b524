/**
 * Privacy checks on hand-built cases: a planted copy is found, and distance-to-closest-record
 * percentiles follow the definition in model/quality/percentile.ts (linear interpolation between
 * closest ranks, Hyndman & Fan's definition 7, numpy's default).
 */
import avro from 'avsc';
import { describe, expect, it } from 'vitest';
import type { AvroRecord } from '../../../model/features/avro-types.js';
import type { FeatureRows } from '../../../model/quality/feature-rows.js';
import { closestRecordDistances } from '../../../model/quality/metrics/closest-record.js';
import { RecordFingerprints, closestRecordPercentiles } from '../../../model/quality/privacy.js';
import { createPrng } from '../../../model/random.js';

// Invented scenario: readings of river gauges.
const gaugeType = avro.Type.forSchema({
  type: 'record',
  name: 'GaugeReading',
  fields: [
    { name: 'gauge', type: 'string' },
    { name: 'level_m', type: 'double' },
    { name: 'flood', type: 'boolean' },
    { name: 'note', type: ['null', 'string'], default: null },
  ],
});

describe('exact copies', () => {
  const train: AvroRecord[] = [
    { gauge: 'G-1', level_m: 2.5, flood: false, note: null },
    { gauge: 'G-2', level_m: 4.75, flood: true, note: 'levee watch' },
    { gauge: 'G-3', level_m: 1.25, flood: false, note: null },
  ];
  const fingerprints = new RecordFingerprints(gaugeType, train);

  it('counts a planted duplicate (equal field for field, built anew) and nothing else', () => {
    const synthetic: AvroRecord[] = [
      { gauge: 'G-2', level_m: 4.75, flood: true, note: 'levee watch' },
      { gauge: 'G-2', level_m: 4.75000001, flood: true, note: 'levee watch' },
      { gauge: 'G-1', level_m: 2.5, flood: true, note: null },
      { gauge: 'G-3', level_m: 1.25, flood: false, note: '' },
    ];
    expect(fingerprints.countCopies(synthetic)).toBe(1);
    expect(fingerprints.countCopies([...train, ...train])).toBe(6);
  });
});

describe('distance to closest record', () => {
  const rows = (points: readonly (readonly number[])[]): FeatureRows => ({ values: Float32Array.from(points.flat()), width: points[0]!.length, count: points.length });

  it('measures Euclidean distance to the nearest reference row', () => {
    const reference = rows([[0, 0], [3, 4], [10, 0]]);
    // (0, 0) is a reference row; (3, 0) is 3 from (0, 0), 4 from (3, 4); (6, 8) is 5 from (3, 4); (10, 1) is 1 from (10, 0).
    expect([...closestRecordDistances(rows([[0, 0], [3, 0], [6, 8], [10, 1]]), reference)]).toEqual([0, 3, 5, 1]);
  });

  it('gives p5, p50 and p95 by linear interpolation between closest ranks', () => {
    // One feature, reference at 0: distances are |x| = 0, 1, 2, 3, 4 (queries in any order).
    // Definition 7: position h = (n − 1)·q/100 in the sorted distances, n = 5:
    //   p5: h = 0.2 → 0 + 0.2·(1 − 0) = 0.2;   p50: h = 2 → 2;   p95: h = 3.8 → 3 + 0.8·(4 − 3) = 3.8.
    const percentiles = closestRecordPercentiles(rows([[3], [-1], [0], [4], [-2]]), rows([[0]]), createPrng(1));
    expect(percentiles.p5).toBeCloseTo(0.2, 6);
    expect(percentiles.p50).toBeCloseTo(2, 6);
    expect(percentiles.p95).toBeCloseTo(3.8, 6);
  });
});
