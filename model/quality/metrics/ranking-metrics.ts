/**
 * ROC-AUC and average precision (PR-AUC) of scores against binary truth, with optional per-sample
 * weights (a bootstrap resample is a weight vector of multiplicities). The samples are sorted once,
 * so each weighted evaluation is a single pass.
 *
 * - ROC-AUC is the Mann–Whitney probability that a positive outscores a negative, ties counting
 *   one half (equal to the trapezoidal area under the ROC curve).
 * - Average precision is Σ_n (R_n − R_(n−1))·P_n over the distinct score thresholds from high to
 *   low, P_n and R_n the precision and recall at threshold n: no interpolation, as scikit-learn's
 *   `average_precision_score` defines it.
 */
export class RankedScores {
  /** Sample indices by descending score. */
  private readonly order: Int32Array;
  /** Start of each group of equal scores in `order`, plus the end. */
  private readonly groupStarts: Int32Array;
  private readonly positive: Uint8Array;

  constructor(scores: ArrayLike<number>, positive: ArrayLike<boolean | number>) {
    if (scores.length !== positive.length) throw new Error(`ranking metrics: ${scores.length} scores but ${positive.length} labels`);
    this.positive = Uint8Array.from({ length: positive.length }, (_, i) => (positive[i] ? 1 : 0));
    this.order = Int32Array.from({ length: scores.length }, (_, i) => i).sort((a, b) => scores[b]! - scores[a]! || a - b);
    const starts = [0];
    for (let i = 1; i < this.order.length; i++) if (scores[this.order[i]!] !== scores[this.order[i - 1]!]) starts.push(i);
    starts.push(this.order.length);
    this.groupStarts = Int32Array.from(starts);
  }

  /** NaN when either class has no weight. */
  rocAuc(weights?: ArrayLike<number>): number {
    const { positives, negatives } = this.totals(weights);
    if (positives === 0 || negatives === 0) return Number.NaN;
    let negativesAbove = 0;
    let sum = 0;
    this.forEachGroup(weights, (groupPositives, groupNegatives) => {
      const negativesBelow = negatives - negativesAbove - groupNegatives;
      sum += groupPositives * (negativesBelow + 0.5 * groupNegatives);
      negativesAbove += groupNegatives;
    });
    return sum / (positives * negatives);
  }

  /** NaN when the positives have no weight. */
  averagePrecision(weights?: ArrayLike<number>): number {
    const { positives } = this.totals(weights);
    if (positives === 0) return Number.NaN;
    let truePositives = 0;
    let falsePositives = 0;
    let sum = 0;
    this.forEachGroup(weights, (groupPositives, groupNegatives) => {
      truePositives += groupPositives;
      falsePositives += groupNegatives;
      if (groupPositives > 0) sum += (groupPositives / positives) * (truePositives / (truePositives + falsePositives));
    });
    return sum;
  }

  private totals(weights: ArrayLike<number> | undefined): { positives: number; negatives: number } {
    let positives = 0;
    let negatives = 0;
    for (let i = 0; i < this.positive.length; i++) {
      const weight = weights === undefined ? 1 : weights[i]!;
      if (this.positive[i]) positives += weight;
      else negatives += weight;
    }
    return { positives, negatives };
  }

  /** Visits the groups of equal score from the highest, with their weighted positives and negatives. */
  private forEachGroup(weights: ArrayLike<number> | undefined, visit: (positives: number, negatives: number) => void): void {
    for (let g = 0; g + 1 < this.groupStarts.length; g++) {
      let positives = 0;
      let negatives = 0;
      for (let k = this.groupStarts[g]!; k < this.groupStarts[g + 1]!; k++) {
        const sample = this.order[k]!;
        const weight = weights === undefined ? 1 : weights[sample]!;
        if (this.positive[sample]) positives += weight;
        else negatives += weight;
      }
      if (positives > 0 || negatives > 0) visit(positives, negatives);
    }
  }
}
