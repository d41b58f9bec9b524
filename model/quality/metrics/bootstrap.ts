/**
 * Percentile bootstrap over holdout resamples with the predictions held fixed (Efron & Tibshirani
 * 1993, ch. 13). Resamples are stratified by class: each class's holdout records are drawn with
 * replacement to their own count, so every resample keeps the holdout's class shares and a rare
 * class never vanishes from a resample (which would leave its recall and AUCs undefined).
 * A resample is a vector of multiplicities, one per holdout record; the same resamples serve every
 * generator and classifier, so their intervals differ by the models alone.
 */
import type { Prng } from '../../random.js';
import type { Interval } from '../quality-report.js';
import { percentileOfSorted } from './percentile.js';

/** Two-sided 95 % intervals: the 2.5th and 97.5th percentiles of the resampled statistic. */
export const INTERVAL_PERCENTILES = [2.5, 97.5] as const;

/** `resamples` multiplicity vectors over the samples, stratum by stratum; `streamFor(b)` draws resample b. */
export function stratifiedResamples(strata: ArrayLike<number>, resamples: number, streamFor: (resample: number) => Prng): Uint16Array[] {
  const members = new Map<number, number[]>();
  for (let i = 0; i < strata.length; i++) {
    const list = members.get(strata[i]!) ?? [];
    list.push(i);
    members.set(strata[i]!, list);
  }
  const groups = [...members.entries()].sort(([a], [b]) => a - b).map(([, list]) => list);
  return Array.from({ length: resamples }, (_, b) => {
    const prng = streamFor(b);
    const weights = new Uint16Array(strata.length);
    for (const group of groups) for (let draw = 0; draw < group.length; draw++) weights[group[prng.integer(group.length)]!]!++;
    return weights;
  });
}

/**
 * The statistic on the full sample (uniform weights) with its percentile interval over the
 * resamples; resamples where the statistic is undefined (NaN) are left out.
 */
export function bootstrapInterval(statistic: (weights?: ArrayLike<number>) => number, resamples: readonly Uint16Array[]): Interval {
  const values = Float64Array.from(resamples.map((weights) => statistic(weights)).filter((value) => !Number.isNaN(value))).sort();
  return {
    estimate: statistic(),
    low: percentileOfSorted(values, INTERVAL_PERCENTILES[0]),
    high: percentileOfSorted(values, INTERVAL_PERCENTILES[1]),
  };
}
