/**
 * The two classifiers of the usefulness and detection checks: the logistic regression against
 * scikit-learn's, the random forest on cases whose answer is known by construction.
 */
import { describe, expect, it } from 'vitest';
import { LogisticRegression } from '../../../model/quality/classifiers/logistic-regression.js';
import { RandomForestClassifier } from 'ml-random-forest';
import { RandomForest, mostProbableClass } from '../../../model/quality/classifiers/random-forest.js';
import { RankedScores } from '../../../model/quality/metrics/ranking-metrics.js';
import type { FeatureRows } from '../../../model/quality/feature-rows.js';
import { createPrng } from '../../../model/random.js';

function rows(data: readonly (readonly number[])[]): FeatureRows {
  return { values: Float32Array.from(data.flat()), width: data[0]!.length, count: data.length };
}

describe('LogisticRegression', () => {
  it('matches scikit-learn LogisticRegression(C=1) (L2, intercept unpenalised)', () => {
    // /usr/bin/python3 (Debian python3-sklearn 1.2.1):
    //   m = LogisticRegression(C=1.0, tol=1e-12, max_iter=10000).fit(X, y)
    //   m.intercept_ → -0.6438579154589457; m.coef_ → [1.5680309941541541, 0.3001505019636168]
    //   m.predict_proba([[0.3, 0.3], [-1, 1]])[:, 1] → [0.47916121173485227, 0.12878567703426128]
    const x = [[0.5, 1.2], [1.5, -0.3], [-0.7, 0.8], [2.1, 1.9], [-1.3, -0.4], [0.2, -1.1], [1.1, 0.4], [-0.2, 2.2], [1.8, -1.0], [-1.6, 0.3], [0.9, 1.5], [-0.5, -1.8]];
    const y = [1, 1, 0, 1, 0, 0, 1, 0, 1, 0, 1, 0];
    const model = LogisticRegression.fit(rows(x), y);
    // Float32 features: agreement to ~1e-6, not to the last digit.
    expect(model.coefficients[0]).toBeCloseTo(-0.6438579154589457, 5);
    expect(model.coefficients[1]).toBeCloseTo(1.5680309941541541, 5);
    expect(model.coefficients[2]).toBeCloseTo(0.3001505019636168, 5);
    const p = model.probabilities(rows([[0.3, 0.3], [-1, 1]]));
    expect(p[0]).toBeCloseTo(0.47916121173485227, 5);
    expect(p[1]).toBeCloseTo(0.12878567703426128, 5);
  });

  it('stays finite on perfectly separable data and on a single class (the penalty and the intercept sliver)', () => {
    const separable = LogisticRegression.fit(rows([[-2], [-1], [1], [2]]), [0, 0, 1, 1]);
    expect([...separable.coefficients].every(Number.isFinite)).toBe(true);
    expect(separable.probabilities(rows([[3]]))[0]).toBeGreaterThan(0.5);
    const oneClass = LogisticRegression.fit(rows([[0.1], [0.4]]), [0, 0]);
    expect([...oneClass.coefficients].every(Number.isFinite)).toBe(true);
  });
});

describe('RandomForest', () => {
  const prng = createPrng(11);
  const make = (count: number, label: (x: number, y: number) => number) => {
    const data: number[][] = [];
    const labels: number[] = [];
    for (let i = 0; i < count; i++) {
      const x = prng.uniform() * 2 - 1;
      const y = prng.uniform() * 2 - 1;
      data.push([x, y, prng.normal()]);
      labels.push(label(x, y));
    }
    return { rows: rows(data), labels };
  };

  it('learns XOR, which no linear model can (by construction: class = sign(x) ≠ sign(y))', () => {
    const xor = (x: number, y: number) => (x > 0 !== y > 0 ? 1 : 0);
    const train = make(2000, xor);
    const test = make(500, xor);
    const forest = RandomForest.fit(train.rows, train.labels, 2, (tree) => createPrng(1000 + tree), { trees: 30 });
    const predicted = mostProbableClass(forest.probabilities(test.rows), 2);
    const accuracy = predicted.filter((c, i) => c === test.labels[i]).length / test.labels.length;
    expect(accuracy).toBeGreaterThan(0.95);
    const linear = LogisticRegression.fit(train.rows, train.labels).probabilities(test.rows);
    const linearAccuracy = test.labels.filter((label, i) => (linear[i]! >= 0.5 ? 1 : 0) === label).length / test.labels.length;
    expect(linearAccuracy).toBeLessThan(0.65);
  });

  it('gives class shares that sum to 1 and is the same for the same streams', () => {
    const three = make(600, (x, y) => (x + y > 0.5 ? 2 : x > 0 ? 1 : 0));
    const fit = () => RandomForest.fit(three.rows, three.labels, 3, (tree) => createPrng(tree), { trees: 10 });
    const p = fit().probabilities(three.rows);
    for (let r = 0; r < 600; r++) expect(p[r * 3]! + p[r * 3 + 1]! + p[r * 3 + 2]!).toBeCloseTo(1, 9);
    expect(fit().probabilities(three.rows)).toEqual(p);
  });

  it('ranks a noisy holdout as well as the reference library ml-random-forest does', () => {
    // Reference: mljs ml-random-forest (a general-purpose library; too slow for the evaluation's
    // tens of thousands of rows, see random-forest.ts) on the same data. A class that depends on two
    // features plus label noise, and two pure-noise features; ROC-AUC on a holdout of 600.
    const noisy = (x: number, y: number) => (x + 0.5 * y + 0.4 * prng.normal() > 0.2 ? 1 : 0);
    const train = make(800, noisy);
    const test = make(600, noisy);
    const ours = RandomForest.fit(train.rows, train.labels, 2, (tree) => createPrng(2000 + tree), { trees: 30 }).probabilities(test.rows);
    const table = (r: FeatureRows) => Array.from({ length: r.count }, (_, i) => Array.from(r.values.subarray(i * r.width, (i + 1) * r.width)));
    const reference = new RandomForestClassifier({ nEstimators: 30, seed: 7, maxFeatures: 0.7, useSampleBagging: true, noOOB: true });
    reference.train(table(train.rows), train.labels);
    const referenceScores = reference.predictProbability(table(test.rows), 1);
    const oursAuc = new RankedScores(Array.from({ length: test.labels.length }, (_, i) => ours[i * 2 + 1]!), test.labels).rocAuc();
    const referenceAuc = new RankedScores(referenceScores, test.labels).rocAuc();
    // Tolerance 0.03: two forests with different seeds on 600 test rows differ by about that much.
    expect(referenceAuc).toBeGreaterThan(0.8);
    expect(Math.abs(oursAuc - referenceAuc)).toBeLessThan(0.03);
  });
});
