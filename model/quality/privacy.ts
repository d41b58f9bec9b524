/**
 * Privacy checks of one generator's records of one rare class against the real train split:
 * exact copies (a synthetic record whose Avro binary encoding equals a train record's: equal field
 * for field, label included) and distance-to-closest-record percentiles, synthetic → train, beside
 * the yardstick holdout → train (how close a new real record of the class sits), in the feature
 * codec's standardised units. A synthetic set sitting much closer than the holdout suggests
 * memorisation.
 *
 * Distances are measured for at most DCR_MAX_QUERIES records per side (a seeded subsample), each
 * against every train record, to bound the time on large sets.
 */
import type { Type } from 'avsc';
import type { AvroRecord } from '../features/avro-types.js';
import type { Prng } from '../random.js';
import { sampleIndices } from './evaluation-streams.js';
import { selectRows, type FeatureRows } from './feature-rows.js';
import { closestRecordDistances } from './metrics/closest-record.js';
import { percentile } from './metrics/percentile.js';
import type { DistancePercentiles } from './quality-report.js';

export const DCR_MAX_QUERIES = 1000;

/** The train records' binary encodings, for copy checks. */
export class RecordFingerprints {
  private readonly keys: Set<string>;

  constructor(
    private readonly type: Type,
    records: readonly AvroRecord[],
  ) {
    this.keys = new Set(records.map((record) => this.keyOf(record)));
  }

  countCopies(records: readonly AvroRecord[]): number {
    return records.filter((record) => this.keys.has(this.keyOf(record))).length;
  }

  private keyOf(record: AvroRecord): string {
    return this.type.toBuffer(record).toString('latin1');
  }
}

/** p5, p50 and p95 of each query's distance to its closest reference row (NaN when there are no queries). */
export function closestRecordPercentiles(queries: FeatureRows, reference: FeatureRows, prng: Prng): DistancePercentiles {
  const subset = queries.count > DCR_MAX_QUERIES ? selectRows(queries, sampleIndices(queries.count, DCR_MAX_QUERIES, prng)) : queries;
  const distances = closestRecordDistances(subset, reference).sort();
  return { p5: percentile(distances, 5), p50: percentile(distances, 50), p95: percentile(distances, 95) };
}
