import { standardNormalCdf, standardNormalQuantile } from './normal.js';

/**
 * The empirical distribution of one numeric field, used to Gaussianise it: a value x maps to
 * z = Φ⁻¹(F(x)) and back through x = F⁻¹(Φ(z)), so decoded values follow the sample's marginal.
 *
 * The distribution is kept as knots: sorted distinct values with their counts and the number of sample
 * values below each. When the sample has at most `maxKnots` distinct values every one is a knot (exact
 * mode, the usual case for rounded measurements, counts and codes); otherwise the knots are the values
 * at evenly spaced ranks plus every value heavier than one rank step, the minimum and the maximum.
 *
 * The CDF is piecewise linear. A knot holding c of n sample values sits at its mid-rank
 * p = (below + c/2)/n (Hazen plotting position) and owns the flat stretch of width (c − 1)/n around it,
 * so a value repeated many times (zero rainfall, a count of 3) decodes back to exactly that value with
 * its share of the probability; between two knots the CDF rises linearly over one observation's worth
 * of probability plus the skipped values'. Beyond the extreme knots the quantile function is flat:
 * decoded values never leave the observed range.
 *
 * Feature vectors are Float32, and rounding z to float32 moves Φ(z) by at most ~1.5e-8; each flat stretch
 * is widened by `snap` (below) on both sides so that a knot value still decodes to itself exactly.
 */
export interface MarginalJson {
  /** Knot values, strictly increasing. */
  readonly values: readonly number[];
  /** Sample values equal to each knot. */
  readonly counts: readonly number[];
  /** Sample values strictly below each knot. */
  readonly below: readonly number[];
  /** Number of (finite) sample values. */
  readonly n: number;
  /** Number of distinct sample values (equal to the number of knots in exact mode). */
  readonly distinct: number;
}

/** Half-width added to every knot's flat stretch in probability: about 2.8× the most that float32 rounding of z moves Φ(z). */
const SNAP_PROBABILITY = 4e-8;

/** Index of the last element of `sorted` that is ≤ x, or −1 (binary search). */
function lastAtMost(sorted: Float64Array, x: number): number {
  let low = 0;
  let high = sorted.length - 1;
  let found = -1;
  while (low <= high) {
    const middle = (low + high) >>> 1;
    if (sorted[middle]! <= x) {
      found = middle;
      low = middle + 1;
    } else {
      high = middle - 1;
    }
  }
  return found;
}

/** Builds the knots of a marginal from finite sample values. Requires at least one value and maxKnots ≥ 2. */
export function buildMarginal(sample: readonly number[], maxKnots: number): MarginalJson {
  const sorted = Float64Array.from(sample).sort();
  const distinctValues: number[] = [];
  const distinctCounts: number[] = [];
  const distinctBelow: number[] = [];
  for (let i = 0; i < sorted.length; i++) {
    const value = sorted[i]!;
    if (distinctValues.length > 0 && distinctValues[distinctValues.length - 1] === value) {
      distinctCounts[distinctCounts.length - 1]! += 1;
    } else {
      // `+ 0` stores −0 as 0, which is what JSON would turn it into anyway.
      distinctValues.push(value + 0);
      distinctCounts.push(1);
      distinctBelow.push(i);
    }
  }
  const n = sorted.length;
  const distinct = distinctValues.length;
  if (distinct <= maxKnots) {
    return { values: distinctValues, counts: distinctCounts, below: distinctBelow, n, distinct };
  }
  const belowRanks = Float64Array.from(distinctBelow);
  const keep = new Set<number>([0, distinct - 1]);
  for (let j = 0; j < distinct; j++) if (distinctCounts[j]! * maxKnots > n) keep.add(j);
  const rankSteps = Math.max(0, maxKnots - keep.size);
  for (let i = 0; i < rankSteps; i++) {
    const rank = Math.round(((i + 0.5) * (n - 1)) / rankSteps);
    keep.add(lastAtMost(belowRanks, rank));
  }
  const chosen = [...keep].sort((a, b) => a - b);
  return {
    values: chosen.map((j) => distinctValues[j]!),
    counts: chosen.map((j) => distinctCounts[j]!),
    below: chosen.map((j) => distinctBelow[j]!),
    n,
    distinct,
  };
}

/** A marginal ready to encode and decode; built from its JSON form. */
export class EmpiricalMarginal {
  private readonly values: Float64Array;
  /** Mid-rank probability of each knot: its encoded position. */
  private readonly centres: Float64Array;
  /** Lower and upper ends of each knot's flat stretch in probability. */
  private readonly lowEdges: Float64Array;
  private readonly highEdges: Float64Array;
  /** Φ⁻¹ of each centre, so encoding a value that is a knot (the usual case) costs a search, no logarithm. */
  private readonly knotScores: Float64Array;

  constructor(json: MarginalJson) {
    const knots = json.values.length;
    this.values = Float64Array.from(json.values);
    this.centres = new Float64Array(knots);
    this.lowEdges = new Float64Array(knots);
    this.highEdges = new Float64Array(knots);
    this.knotScores = new Float64Array(knots);
    const n = json.n;
    // Keep the linear stretch between two singleton knots (1/n wide) at least 90 % of its width.
    const snap = Math.min(SNAP_PROBABILITY, 0.05 / n);
    for (let j = 0; j < knots; j++) {
      const count = json.counts[j]!;
      const centre = (json.below[j]! + count / 2) / n;
      const halfFlat = (count - 1) / (2 * n) + snap;
      this.centres[j] = centre;
      this.lowEdges[j] = centre - halfFlat;
      this.highEdges[j] = centre + halfFlat;
      this.knotScores[j] = standardNormalQuantile(centre);
    }
  }

  get min(): number {
    return this.values[0]!;
  }

  get max(): number {
    return this.values[this.values.length - 1]!;
  }

  /** F(x): the probability position of x, clipped to the extreme knots' centres (so always in (0, 1)). */
  probabilityOf(x: number): number {
    const last = this.values.length - 1;
    if (Number.isNaN(x)) return 0.5;
    const j = lastAtMost(this.values, x);
    if (j < 0) return this.centres[0]!;
    if (j === last || this.values[j] === x) return this.centres[j]!;
    const start = this.highEdges[j]!;
    const end = this.lowEdges[j + 1]!;
    const fraction = (x - this.values[j]!) / (this.values[j + 1]! - this.values[j]!);
    return start + fraction * (end - start);
  }

  /** F⁻¹(p): the value at probability p, always within [min, max]; NaN maps to the median. */
  valueAt(p: number): number {
    if (Number.isNaN(p)) return this.valueAt(0.5);
    const j = lastAtMost(this.lowEdges, p);
    if (j < 0) return this.values[0]!;
    if (p <= this.highEdges[j]! || j === this.values.length - 1) return this.values[j]!;
    const start = this.highEdges[j]!;
    const end = this.lowEdges[j + 1]!;
    const fraction = (p - start) / (end - start);
    const low = this.values[j]!;
    const high = this.values[j + 1]!;
    return Math.min(high, Math.max(low, low + fraction * (high - low)));
  }

  /** The standard-normal score of x. ±Infinity map to the extreme knots like any out-of-range value. */
  encode(x: number): number {
    const j = lastAtMost(this.values, x);
    if (j >= 0 && this.values[j] === x) return this.knotScores[j]!;
    return standardNormalQuantile(this.probabilityOf(x));
  }

  /** The value for a standard-normal score; any number, including ±Infinity and NaN, gives a value in range. */
  decode(z: number): number {
    return this.valueAt(standardNormalCdf(z));
  }
}
