/**
 * A small multinomial logistic regression (softmax regression) for tests: features standardised,
 * full-batch gradient descent on the mean cross-entropy with an L2 penalty, and "balanced" class
 * weights n / (classes · n_c) so a rare class counts as much as a common one (the usual remedy for
 * imbalance; common practice). Deterministic: zero initialisation, fixed steps.
 */

export interface LogisticRegressionOptions {
  /** @default 2000 */
  readonly iterations?: number;
  /** @default 0.5 */
  readonly learningRate?: number;
  /** L2 penalty on the weights (not the biases). @default 1e-3 */
  readonly l2?: number;
  /** Weight classes by n / (classes · n_c). @default true */
  readonly balanced?: boolean;
}

export interface SoftmaxClassifier {
  /** Index of the most probable class. */
  predict(features: readonly number[]): number;
  probabilities(features: readonly number[]): number[];
}

export function fitLogisticRegression(
  rows: readonly (readonly number[])[],
  labels: readonly number[],
  classCount: number,
  options: LogisticRegressionOptions = {},
): SoftmaxClassifier {
  const { iterations = 2000, learningRate = 0.5, l2 = 1e-3, balanced = true } = options;
  const n = rows.length;
  const width = rows[0]!.length;
  const mean = Array.from({ length: width }, (_, j) => rows.reduce((sum, row) => sum + row[j]!, 0) / n);
  const scale = Array.from({ length: width }, (_, j) => Math.sqrt(rows.reduce((sum, row) => sum + (row[j]! - mean[j]!) ** 2, 0) / n) || 1);
  const standardise = (row: readonly number[]) => row.map((value, j) => (value - mean[j]!) / scale[j]!);
  const x = rows.map(standardise);
  const counts = new Array<number>(classCount).fill(0);
  for (const label of labels) counts[label]! += 1;
  const rowWeight = labels.map((label) => (balanced ? n / (classCount * counts[label]!) : 1));
  const totalWeight = rowWeight.reduce((sum, w) => sum + w, 0);
  const weights = Array.from({ length: classCount }, () => new Array<number>(width + 1).fill(0));

  const softmax = (features: readonly number[]) => {
    const logits = weights.map((w) => w[width]! + features.reduce((sum, value, j) => sum + value * w[j]!, 0));
    const top = Math.max(...logits);
    const exps = logits.map((logit) => Math.exp(logit - top));
    const total = exps.reduce((sum, e) => sum + e, 0);
    return exps.map((e) => e / total);
  };

  for (let step = 0; step < iterations; step++) {
    const gradient = Array.from({ length: classCount }, () => new Array<number>(width + 1).fill(0));
    x.forEach((features, r) => {
      const p = softmax(features);
      for (let c = 0; c < classCount; c++) {
        const error = (rowWeight[r]! * (p[c]! - (labels[r] === c ? 1 : 0))) / totalWeight;
        for (let j = 0; j < width; j++) gradient[c]![j]! += error * features[j]!;
        gradient[c]![width]! += error;
      }
    });
    for (let c = 0; c < classCount; c++) {
      for (let j = 0; j <= width; j++) {
        const penalty = j < width ? l2 * weights[c]![j]! : 0;
        weights[c]![j]! -= learningRate * (gradient[c]![j]! + penalty);
      }
    }
  }
  return {
    probabilities: (features) => softmax(standardise(features)),
    predict(features) {
      const p = softmax(standardise(features));
      return p.indexOf(Math.max(...p));
    },
  };
}
