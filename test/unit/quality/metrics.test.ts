/**
 * The metric formulas against outside references. Numbers marked "scipy/sklearn" were computed once
 * with Debian's python3-scipy 1.10.1 and python3-sklearn 1.2.1 (numpy 1.24.2) by
 * `/usr/bin/python3 ref.py`, the script pasted beside each check; the tests do not need Python.
 */
import { describe, expect, it } from 'vitest';
import { ksStatistic } from '../../../model/quality/metrics/ks.js';
import { percentile } from '../../../model/quality/metrics/percentile.js';
import { RankedScores } from '../../../model/quality/metrics/ranking-metrics.js';
import { thresholdMetrics } from '../../../model/quality/metrics/threshold-metrics.js';
import { totalVariationDistance } from '../../../model/quality/metrics/total-variation.js';

describe('two-sample Kolmogorov–Smirnov statistic', () => {
  it('matches scipy.stats.ks_2samp(a, b).statistic, ties within and across samples included', () => {
    // from scipy.stats import ks_2samp
    // ks_2samp([0.61, 1.3, 2.2, 2.2, 3.7, 4.1, 5.0, 0.2], [1.1, 2.2, 2.9, 3.3, 6.4, 7.0]).statistic  → 0.3333333333333333
    // ks_2samp([1, 1, 1, 2, 2, 3], [1, 2, 2, 2, 3, 3, 4]).statistic                                   → 0.35714285714285715
    // ks_2samp([-0.3, 0.8, 1.9, -1.2, 0.05, 2.4, 0.7, -0.6, 1.1, 0.3, -2.0, 0.9],
    //          [0.5, 1.5, 2.5, 3.5, -0.5]).statistic                                                  → 0.43333333333333335
    expect(ksStatistic([0.61, 1.3, 2.2, 2.2, 3.7, 4.1, 5.0, 0.2], [1.1, 2.2, 2.9, 3.3, 6.4, 7.0])).toBeCloseTo(0.3333333333333333, 12);
    expect(ksStatistic([1, 1, 1, 2, 2, 3], [1, 2, 2, 2, 3, 3, 4])).toBeCloseTo(0.35714285714285715, 12);
    expect(ksStatistic([-0.3, 0.8, 1.9, -1.2, 0.05, 2.4, 0.7, -0.6, 1.1, 0.3, -2.0, 0.9], [0.5, 1.5, 2.5, 3.5, -0.5])).toBeCloseTo(0.43333333333333335, 12);
  });

  it('is 0 for equal samples and 1 for disjoint ones (definition)', () => {
    expect(ksStatistic([3, 1, 2], [1, 2, 3])).toBe(0);
    expect(ksStatistic([1, 2], [5, 6, 7])).toBe(1);
  });
});

describe('total variation distance', () => {
  it('is half the L1 distance of the category shares (definition)', () => {
    // a: x ½, y ½; b: x ¼, y ¼, z ½ → ½(¼ + ¼ + ½) = ½.
    expect(totalVariationDistance(['x', 'y'], ['x', 'y', 'z', 'z'])).toBeCloseTo(0.5, 12);
    expect(totalVariationDistance(['x', 'x'], ['x'])).toBe(0);
    expect(totalVariationDistance(['x'], ['y'])).toBe(1);
  });
});

describe('ROC-AUC and average precision', () => {
  const truth = [1, 0, 1, 1, 0, 0, 1, 0, 0, 1];
  const scores = [0.9, 0.8, 0.8, 0.7, 0.7, 0.5, 0.4, 0.3, 0.3, 0.1];
  const weights = [2, 0, 1, 3, 1, 1, 0, 2, 1, 1];

  it('matches sklearn roc_auc_score and average_precision_score, with and without sample weights', () => {
    // y = [1,0,1,1,0,0,1,0,0,1]; s = [0.9,0.8,0.8,0.7,0.7,0.5,0.4,0.3,0.3,0.1]; w = [2,0,1,3,1,1,0,2,1,1]
    // roc_auc_score(y, s) → 0.6000000000000001           average_precision_score(y, s) → 0.6676190476190476
    // roc_auc_score(y, s, sample_weight=w) → 0.8142857142857143
    // average_precision_score(y, s, sample_weight=w) → 0.8792517006802721
    const ranked = new RankedScores(scores, truth);
    expect(ranked.rocAuc()).toBeCloseTo(0.6, 12);
    expect(ranked.averagePrecision()).toBeCloseTo(0.6676190476190476, 12);
    expect(ranked.rocAuc(weights)).toBeCloseTo(0.8142857142857143, 12);
    expect(ranked.averagePrecision(weights)).toBeCloseTo(0.8792517006802721, 12);
  });

  it('matches a hand computation with tied scores', () => {
    // truth [1, 0, 1, 1, 0], scores [0.9, 0.7, 0.7, 0.3, 0.3]: positives 0.9, 0.7, 0.3; negatives 0.7, 0.3.
    // ROC-AUC = P(positive outscores negative), ties ½, over the 3 × 2 pairs:
    //   0.9 > 0.7: 1   0.9 > 0.3: 1   0.7 = 0.7: ½   0.7 > 0.3: 1   0.3 < 0.7: 0   0.3 = 0.3: ½   → 4 / 6 = 2/3.
    // Average precision = Σ (R_n − R_(n−1))·P_n over thresholds 0.9, 0.7, 0.3 (a tie group enters whole):
    //   ≥ 0.9: TP 1 FP 0 → P 1,   R 1/3;   ≥ 0.7: TP 2 FP 1 → P 2/3, R 2/3;   ≥ 0.3: TP 3 FP 2 → P 3/5, R 1
    //   AP = ⅓·1 + ⅓·⅔ + ⅓·⅗ = 34/45.
    const ranked = new RankedScores([0.9, 0.7, 0.7, 0.3, 0.3], [1, 0, 1, 1, 0]);
    expect(ranked.rocAuc()).toBeCloseTo(2 / 3, 12);
    expect(ranked.averagePrecision()).toBeCloseTo(34 / 45, 12);
  });

  it('is undefined (NaN) without positives', () => {
    expect(new RankedScores([0.2, 0.4], [0, 0]).averagePrecision()).toBeNaN();
    expect(new RankedScores([0.2, 0.4], [0, 0]).rocAuc()).toBeNaN();
  });
});

describe('precision, recall and F1', () => {
  it('match sklearn precision_recall_fscore_support(average="binary"), with and without sample weights', () => {
    // y = [1,0,1,1,0,0,1,0,0,1]; p = [1,1,1,0,1,0,0,0,0,1]; w = [2,0,1,3,1,1,0,2,1,1]
    // precision_recall_fscore_support(y, p, average='binary') → (0.6, 0.6, 0.6, None)
    // ... sample_weight=w → (0.8, 0.5714285714285714, 0.6666666666666666, None)
    const truth = [1, 0, 1, 1, 0, 0, 1, 0, 0, 1];
    const predicted = [1, 1, 1, 0, 1, 0, 0, 0, 0, 1];
    const plain = thresholdMetrics(predicted, truth);
    expect(plain.precision).toBeCloseTo(0.6, 12);
    expect(plain.recall).toBeCloseTo(0.6, 12);
    expect(plain.f1).toBeCloseTo(0.6, 12);
    const weighted = thresholdMetrics(predicted, truth, [2, 0, 1, 3, 1, 1, 0, 2, 1, 1]);
    expect(weighted.precision).toBeCloseTo(0.8, 12);
    expect(weighted.recall).toBeCloseTo(0.5714285714285714, 12);
    expect(weighted.f1).toBeCloseTo(0.6666666666666666, 12);
  });

  it('reports 0, not NaN, when nothing is predicted positive (sklearn zero_division default)', () => {
    expect(thresholdMetrics([0, 0, 0], [1, 0, 0])).toEqual({ precision: 0, recall: 0, f1: 0 });
  });
});

describe('percentile', () => {
  it("matches numpy.percentile's default (linear) method", () => {
    // numpy.percentile([0.5, 0.1, 0.9, 0.3, 0.7], [5, 50, 95]) → 0.14, 0.5, 0.86
    const values = [0.5, 0.1, 0.9, 0.3, 0.7];
    expect(percentile(values, 5)).toBeCloseTo(0.14, 12);
    expect(percentile(values, 50)).toBeCloseTo(0.5, 12);
    expect(percentile(values, 95)).toBeCloseTo(0.86, 12);
  });
});
