/**
 * Per-field histograms of one rare class, real beside each generator's records: continuous fields
 * share HISTOGRAM_BINS equal-width bins over the range of every value shown (real and synthetic), so
 * the bars line up; categorical fields count each category, the codec's categories first.
 */
import type { AvroRecord } from '../features/avro-types.js';
import { leafValues, type LeafField } from './leaf-fields.js';
import type { FieldDistribution, GeneratorName } from './quality-report.js';

export const HISTOGRAM_BINS = 20;

export function fieldDistributions(
  leaves: readonly LeafField[],
  real: readonly AvroRecord[],
  synthetic: ReadonlyMap<GeneratorName, readonly AvroRecord[]>,
): FieldDistribution[] {
  return leaves.map((leaf): FieldDistribution => {
    if (leaf.kind === 'continuous') {
      const realValues = leafValues(leaf, real);
      const generated = new Map([...synthetic].map(([name, records]) => [name, leafValues(leaf, records)]));
      const edges = sharedEdges([realValues, ...generated.values()]);
      return {
        field: leaf.field,
        kind: 'continuous',
        edges,
        real: histogram(realValues, edges),
        synthetic: Object.fromEntries([...generated].map(([name, values]) => [name, histogram(values, edges)])),
      };
    }
    const realValues = leafValues(leaf, real);
    const generated = new Map([...synthetic].map(([name, records]) => [name, leafValues(leaf, records)]));
    const categories = [...new Set([...leaf.categories, ...realValues, ...[...generated.values()].flat()])];
    return {
      field: leaf.field,
      kind: 'categorical',
      categories,
      real: categoryCounts(realValues, categories),
      synthetic: Object.fromEntries([...generated].map(([name, values]) => [name, categoryCounts(values, categories)])),
    };
  });
}

/** HISTOGRAM_BINS + 1 edges over [min, max] of all values; a single value gets the bin [v − ½, v + ½]. */
export function sharedEdges(samples: readonly (readonly number[])[]): number[] {
  let min = Number.POSITIVE_INFINITY;
  let max = Number.NEGATIVE_INFINITY;
  for (const sample of samples) {
    for (const value of sample) {
      if (value < min) min = value;
      if (value > max) max = value;
    }
  }
  if (min > max) return [0, 1];
  if (min === max) return [min - 0.5, max + 0.5];
  return Array.from({ length: HISTOGRAM_BINS + 1 }, (_, i) => (i === HISTOGRAM_BINS ? max : min + ((max - min) * i) / HISTOGRAM_BINS));
}

/** Counts per bin [e_i, e_(i+1)), the last bin closed on the right. */
export function histogram(values: readonly number[], edges: readonly number[]): number[] {
  const bins = edges.length - 1;
  const counts = new Array<number>(bins).fill(0);
  const first = edges[0]!;
  const last = edges[bins]!;
  for (const value of values) {
    if (value < first || value > last) continue;
    let bin = Math.floor(((value - first) / (last - first)) * bins);
    if (bin >= bins) bin = bins - 1;
    // Equal-width edges computed by multiplication can sit a rounding error off the division above.
    while (bin > 0 && value < edges[bin]!) bin--;
    while (bin < bins - 1 && value >= edges[bin + 1]!) bin++;
    counts[bin]!++;
  }
  return counts;
}

function categoryCounts(values: readonly string[], categories: readonly string[]): number[] {
  const index = new Map(categories.map((category, i) => [category, i]));
  const counts = new Array<number>(categories.length).fill(0);
  for (const value of values) counts[index.get(value)!]!++;
  return counts;
}
