/**
 * Detection AUC, a classifier two-sample test (Lopez-Paz & Oquab, ICLR 2017): a random forest is
 * asked to tell real records of a class from synthetic ones, in the feature codec's space. An AUC
 * near 0.5 means it cannot; near 1, the synthetic records are easy to spot.
 *
 * DETECTION_FOLDS-fold cross-validation, folds grouped by source: each synthetic record sits in the
 * fold of the real record it was made from. Otherwise a real record and its own near-copies would be
 * split between training and test, the forest would learn "around this real record is synthetic",
 * and the AUC would fall below 0.5 exactly when the synthetic records hug the real ones (we saw 0.2
 * for plain duplication). The synthetic side is subsampled to the size of the real side (at most
 * DETECTION_MAX_PER_SIDE each) so the classes are balanced. The estimate is the mean of the fold
 * AUCs and the interval runs from the lowest fold AUC to the highest (an interval over folds, not a
 * bootstrap).
 *
 * Reading it: around 0.5 (on small classes the folds are tiny and the spread wide), the records
 * cannot be told apart; towards 1, they are easy to spot. Well below 0.5 is not "better than real":
 * it means synthetic records are packed around the real ones (SMOTE's segments end on real records),
 * so a held-out real record is surrounded by synthetic training records and taken for one of them.
 */
import type { Prng } from '../random.js';
import { RandomForest } from './classifiers/random-forest.js';
import { sampleIndices } from './evaluation-streams.js';
import { concatRows, selectRows, type FeatureRows } from './feature-rows.js';
import { RankedScores } from './metrics/ranking-metrics.js';
import type { Interval } from './quality-report.js';

export const DETECTION_FOLDS = 5;
/** Records per side beyond which detection subsamples, to bound its time. */
export const DETECTION_MAX_PER_SIDE = 1000;
/** Reported when a side has fewer than two records: no evidence either way, the widest interval. */
export const UNDETERMINED_DETECTION: Interval = { estimate: 0.5, low: 0, high: 1 };

const DETECTION_FOREST = { trees: 50, maxDepth: 12 };

/**
 * `sources[i]` is the row of `real` that synthetic row i was made from; `streamFor(purpose)` gives
 * the streams `balance`, `folds` and `forest/<fold>` (indexed by tree).
 */
export function detectionAuc(
  real: FeatureRows,
  synthetic: FeatureRows,
  sources: ArrayLike<number>,
  streamFor: (purpose: string, index?: number) => Prng,
): Interval {
  const perSide = Math.min(real.count, synthetic.count, DETECTION_MAX_PER_SIDE);
  if (perSide < 2) return UNDETERMINED_DETECTION;
  const folds = Math.min(DETECTION_FOLDS, perSide);
  const realFold = new Int32Array(real.count);
  sampleIndices(real.count, real.count, streamFor('folds')).forEach((row, position) => (realFold[row] = position % folds));
  const balance = streamFor('balance');
  const realRows = sampleIndices(real.count, perSide, balance);
  const syntheticRows = sampleIndices(synthetic.count, perSide, balance);

  const aucs: number[] = [];
  for (let fold = 0; fold < folds; fold++) {
    const split = (rows: number[], foldOf: (row: number) => number) => ({
      train: rows.filter((row) => foldOf(row) !== fold),
      test: rows.filter((row) => foldOf(row) === fold),
    });
    const realSplit = split(realRows, (row) => realFold[row]!);
    const syntheticSplit = split(syntheticRows, (row) => realFold[sources[row]!]!);
    if (realSplit.test.length === 0 || syntheticSplit.test.length === 0) continue;
    const forest = RandomForest.fit(
      stack(real, realSplit.train, synthetic, syntheticSplit.train),
      [...realSplit.train.map(() => 0), ...syntheticSplit.train.map(() => 1)],
      2,
      (tree) => streamFor(`forest/${fold}`, tree),
      DETECTION_FOREST,
    );
    const probabilities = forest.probabilities(stack(real, realSplit.test, synthetic, syntheticSplit.test));
    const truth = [...realSplit.test.map(() => 0), ...syntheticSplit.test.map(() => 1)];
    aucs.push(new RankedScores(truth.map((_, i) => probabilities[i * 2 + 1]!), truth).rocAuc());
  }
  if (aucs.length === 0) return UNDETERMINED_DETECTION;
  return {
    estimate: aucs.reduce((sum, auc) => sum + auc, 0) / aucs.length,
    low: Math.min(...aucs),
    high: Math.max(...aucs),
  };
}

function stack(real: FeatureRows, realRows: number[], synthetic: FeatureRows, syntheticRows: number[]): FeatureRows {
  return concatRows(real.width, [selectRows(real, realRows), selectRows(synthetic, syntheticRows)]);
}
