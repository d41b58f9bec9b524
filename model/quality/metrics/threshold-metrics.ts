/**
 * Precision, recall and F1 of hard predictions against binary truth, with optional per-sample
 * weights. A ratio with nothing to divide by is 0 (no predicted positives → precision 0; precision
 * and recall both 0 → F1 0), as scikit-learn reports it by default (`zero_division`).
 */
export interface ThresholdMetrics {
  readonly precision: number;
  readonly recall: number;
  readonly f1: number;
}

export function thresholdMetrics(
  predicted: ArrayLike<boolean | number>,
  positive: ArrayLike<boolean | number>,
  weights?: ArrayLike<number>,
): ThresholdMetrics {
  let truePositives = 0;
  let falsePositives = 0;
  let falseNegatives = 0;
  for (let i = 0; i < positive.length; i++) {
    const weight = weights === undefined ? 1 : weights[i]!;
    if (predicted[i] && positive[i]) truePositives += weight;
    else if (predicted[i]) falsePositives += weight;
    else if (positive[i]) falseNegatives += weight;
  }
  const precision = ratio(truePositives, truePositives + falsePositives);
  const recall = ratio(truePositives, truePositives + falseNegatives);
  return { precision, recall, f1: ratio(2 * precision * recall, precision + recall) };
}

function ratio(numerator: number, denominator: number): number {
  return denominator === 0 ? 0 : numerator / denominator;
}
