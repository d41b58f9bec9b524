/**
 * A block of feature vectors in the feature codec's space (continuous fields as normal scores,
 * categories one-hot, presence 0/1), row-major, `width` numbers per row.
 */
import type { AvroRecord } from '../features/avro-types.js';
import type { FeatureCodec } from '../features/feature-codec.js';

export interface FeatureRows {
  readonly values: Float32Array;
  readonly width: number;
  readonly count: number;
}

export function encodeRows(codec: FeatureCodec, records: readonly AvroRecord[]): FeatureRows {
  return { values: codec.encodeBatch(records), width: codec.width, count: records.length };
}

export function selectRows(rows: FeatureRows, indices: readonly number[]): FeatureRows {
  const values = new Float32Array(indices.length * rows.width);
  indices.forEach((row, i) => values.set(rows.values.subarray(row * rows.width, (row + 1) * rows.width), i * rows.width));
  return { values, width: rows.width, count: indices.length };
}

export function concatRows(width: number, blocks: readonly FeatureRows[]): FeatureRows {
  const count = blocks.reduce((sum, block) => sum + block.count, 0);
  const values = new Float32Array(count * width);
  let at = 0;
  for (const block of blocks) {
    values.set(block.values, at);
    at += block.values.length;
  }
  return { values, width, count };
}

/** Row `row` as a view (no copy). */
export function rowOf(rows: FeatureRows, row: number): Float32Array {
  return rows.values.subarray(row * rows.width, (row + 1) * rows.width);
}
