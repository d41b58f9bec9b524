/**
 * Machine-learning efficacy (train on real + synthetic, test on a real holdout; Xu et al. 2019):
 * a logistic regression and a random forest are trained on the train split plus one generator's
 * records and scored one-vs-rest on the real holdout, per rare class.
 *
 * - Random forest: one multi-class forest; a holdout record is predicted to be of class c when c is
 *   its most probable class, and its score for c is the forest's probability of c.
 * - Logistic regression: one binary model per rare class (c against the rest); predicted c when
 *   P(c) ≥ 0.5, scored by P(c).
 * Precision, recall and F1 are of those predictions, PR-AUC (average precision) and ROC-AUC of the
 * scores; every one with a stratified percentile bootstrap interval over the holdout (bootstrap.ts).
 */
import type { Prng } from '../random.js';
import { LogisticRegression } from './classifiers/logistic-regression.js';
import { RandomForest, mostProbableClass } from './classifiers/random-forest.js';
import type { FeatureRows } from './feature-rows.js';
import { bootstrapInterval } from './metrics/bootstrap.js';
import { RankedScores } from './metrics/ranking-metrics.js';
import { thresholdMetrics } from './metrics/threshold-metrics.js';
import type { ClassScores, Usefulness } from './quality-report.js';

export const USEFULNESS_FOREST = { trees: 50, maxDepth: 16 };

export interface LabelledRows {
  readonly rows: FeatureRows;
  /** Class index of each row in `classNames` (−1 for a holdout class the train split lacks). */
  readonly labels: Int32Array;
}

export interface UsefulnessInput {
  readonly train: LabelledRows;
  readonly holdout: LabelledRows;
  readonly classNames: readonly string[];
  /** Indices in `classNames` of the rare classes, in report order. */
  readonly rareClasses: readonly number[];
  readonly resamples: readonly Uint16Array[];
  readonly forestStream: (tree: number) => Prng;
}

export interface UsefulnessResult {
  readonly usefulness: readonly Usefulness[];
  /** The forest, reused to classify synthetic records (label fidelity). */
  readonly forest: RandomForest;
}

export function measureUsefulness(input: UsefulnessInput): UsefulnessResult {
  const { train, holdout, classNames, rareClasses, resamples } = input;
  const classCount = classNames.length;
  const forest = RandomForest.fit(train.rows, train.labels, classCount, input.forestStream, USEFULNESS_FOREST);
  const probabilities = forest.probabilities(holdout.rows);
  const predicted = mostProbableClass(probabilities, classCount);
  const forestScores = rareClasses.map((c) =>
    scoreClass(
      classNames[c]!,
      Float64Array.from({ length: holdout.rows.count }, (_, i) => probabilities[i * classCount + c]!),
      Uint8Array.from(predicted, (p) => (p === c ? 1 : 0)),
      holdout.labels,
      c,
      resamples,
    ),
  );
  const regressionScores = rareClasses.map((c) => {
    const model = LogisticRegression.fit(train.rows, Uint8Array.from(train.labels, (label) => (label === c ? 1 : 0)));
    const scores = model.probabilities(holdout.rows);
    return scoreClass(classNames[c]!, scores, Uint8Array.from(scores, (p) => (p >= 0.5 ? 1 : 0)), holdout.labels, c, resamples);
  });
  return {
    usefulness: [
      { classifier: 'logistic-regression', classes: regressionScores },
      { classifier: 'random-forest', classes: forestScores },
    ],
    forest,
  };
}

function scoreClass(
  className: string,
  scores: Float64Array,
  predicted: Uint8Array,
  labels: Int32Array,
  classIndex: number,
  resamples: readonly Uint16Array[],
): ClassScores {
  const positive = Uint8Array.from(labels, (label) => (label === classIndex ? 1 : 0));
  const ranked = new RankedScores(scores, positive);
  const threshold = (pick: 'precision' | 'recall' | 'f1') => (weights?: ArrayLike<number>) => thresholdMetrics(predicted, positive, weights)[pick];
  return {
    className,
    precision: bootstrapInterval(threshold('precision'), resamples),
    recall: bootstrapInterval(threshold('recall'), resamples),
    f1: bootstrapInterval(threshold('f1'), resamples),
    prAuc: bootstrapInterval((weights) => ranked.averagePrecision(weights), resamples),
    rocAuc: bootstrapInterval((weights) => ranked.rocAuc(weights), resamples),
  };
}
