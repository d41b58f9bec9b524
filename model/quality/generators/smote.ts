/**
 * SMOTE (Chawla, Bowyer, Hall & Kegelmeyer 2002, JAIR 16): for each minority sample, k times, pick
 * one of its `neighbours` nearest same-class samples at random and take a uniform point on the
 * segment between them, x + u·(x_nn − x), u ~ U[0, 1). Run in the feature codec's space (normal
 * scores, one-hot, presence 0/1), so the codec decodes every point to a valid record: an
 * interpolated one-hot block decodes to the larger side, presence to present at ≥ 0.5.
 *
 * With fewer than neighbours + 1 samples every other sample is a neighbour; a class of one sample
 * has none, and its "synthetic" points are the sample itself (copies, which the report counts).
 */
import type { Prng } from '../../random.js';
import type { FeatureRows } from '../feature-rows.js';

/** The neighbour count of the original paper. */
export const SMOTE_NEIGHBOURS = 5;

export interface SmoteSamples {
  readonly rows: FeatureRows;
  /** The minority sample each synthetic row was grown from (row i of the input). */
  readonly sources: Int32Array;
}

export function smote(samples: FeatureRows, perSample: number, prng: Prng, neighbours = SMOTE_NEIGHBOURS): SmoteSamples {
  const { width, count } = samples;
  const x = samples.values;
  const nearest = nearestNeighbours(samples, neighbours);
  const values = new Float32Array(count * perSample * width);
  const sources = new Int32Array(count * perSample);
  let out = 0;
  for (let i = 0; i < count; i++) {
    const candidates = nearest[i]!;
    for (let s = 0; s < perSample; s++, out++) {
      sources[out] = i;
      const neighbour = candidates.length === 0 ? i : candidates[prng.integer(candidates.length)]!;
      const gap = prng.uniform();
      for (let f = 0; f < width; f++) {
        const base = x[i * width + f]!;
        values[out * width + f] = base + gap * (x[neighbour * width + f]! - base);
      }
    }
  }
  return { rows: { values, width, count: out }, sources };
}

/** Each row's `k` nearest other rows by Euclidean distance (ties to the lower index). */
function nearestNeighbours(rows: FeatureRows, k: number): number[][] {
  const { width, count, values } = rows;
  return Array.from({ length: count }, (_, i) => {
    const distances: { row: number; distance: number }[] = [];
    for (let j = 0; j < count; j++) {
      if (j === i) continue;
      let sum = 0;
      for (let f = 0; f < width; f++) sum += (values[i * width + f]! - values[j * width + f]!) ** 2;
      distances.push({ row: j, distance: sum });
    }
    distances.sort((a, b) => a.distance - b.distance || a.row - b.row);
    return distances.slice(0, k).map(({ row }) => row);
  });
}
