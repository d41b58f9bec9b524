/**
 * Distance to closest record (DCR): for each query row, the Euclidean distance to the nearest row
 * of a reference block, in the feature codec's standardised units. A query that equals a reference
 * row in every feature is at distance 0.
 */
import type { FeatureRows } from '../feature-rows.js';

export function closestRecordDistances(queries: FeatureRows, reference: FeatureRows): Float64Array {
  const width = queries.width;
  const distances = new Float64Array(queries.count);
  const q = queries.values;
  const r = reference.values;
  for (let i = 0; i < queries.count; i++) {
    const base = i * width;
    let best = Number.POSITIVE_INFINITY;
    for (let j = 0; j < reference.count && best > 0; j++) {
      const other = j * width;
      let sum = 0;
      // Stop summing once this row is already farther than the best so far.
      for (let f = 0; f < width && sum < best; f++) {
        const difference = q[base + f]! - r[other + f]!;
        sum += difference * difference;
      }
      if (sum < best) best = sum;
    }
    distances[i] = reference.count === 0 ? Number.NaN : Math.sqrt(best);
  }
  return distances;
}
