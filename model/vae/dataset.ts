/**
 * Training rows as the model sees them, the stratified validation split, and class-balanced
 * minibatches drawn from our seeded PRNG.
 */
import { UsageError } from '../../config/errors.js';
import type { Prng } from '../random.js';

/** Feature vectors (row-major, `width` per row) with a class index per row. */
export interface TrainingData {
  readonly width: number;
  readonly features: Float32Array;
  readonly classes: Int32Array;
  /** Class labels; `classes[i]` indexes this list. */
  readonly classNames: readonly string[];
}

export function rowCount(data: TrainingData): number {
  return data.classes.length;
}

/** Checks shapes and class indices; names what is wrong. */
export function assertValidTrainingData(data: TrainingData): void {
  if (data.features.length !== data.classes.length * data.width) {
    throw new UsageError(
      `training data holds ${data.features.length} numbers for ${data.classes.length} rows of width ${data.width}; expected ${data.classes.length * data.width}`,
    );
  }
  if (data.classNames.length === 0) throw new UsageError('training data has no classes: give at least one class name');
  for (let i = 0; i < data.classes.length; i++) {
    const label = data.classes[i]!;
    if (!(label >= 0 && label < data.classNames.length)) {
      throw new UsageError(`training row ${i} has class index ${label}, outside 0…${data.classNames.length - 1}`);
    }
  }
  for (let i = 0; i < data.features.length; i++) {
    if (!Number.isFinite(data.features[i]!)) {
      throw new UsageError(`training row ${Math.floor(i / data.width)} feature ${i % data.width} is ${data.features[i]}; the codec must emit finite numbers`);
    }
  }
}

/** Row indices per class. */
export function rowsByClass(classes: Int32Array, classCount: number): number[][] {
  const byClass: number[][] = Array.from({ length: classCount }, () => []);
  classes.forEach((label, row) => byClass[label]!.push(row));
  return byClass;
}

export interface Split {
  /** Training row indices per class. */
  readonly train: number[][];
  /** Validation row indices per class (a class smaller than 1/fraction rows has none). */
  readonly validation: number[][];
}

/** Holds out floor(fraction · n_c) shuffled rows of each class c for validation. */
export function stratifiedSplit(classes: Int32Array, classCount: number, fraction: number, prng: Prng): Split {
  const train: number[][] = [];
  const validation: number[][] = [];
  for (const rows of rowsByClass(classes, classCount)) {
    const shuffled = shuffle(rows, prng);
    const held = Math.floor(shuffled.length * fraction);
    validation.push(shuffled.slice(0, held));
    train.push(shuffled.slice(held));
  }
  return { train, validation };
}

/**
 * Probability of drawing each class into a minibatch: ∝ count^tempering (0 = balanced, 1 =
 * natural); classes without training rows get 0.
 */
export function classDrawWeights(counts: readonly number[], tempering: number): Float64Array {
  const weights = Float64Array.from(counts, (count) => (count > 0 ? count ** tempering : 0));
  const total = weights.reduce((sum, weight) => sum + weight, 0);
  return weights.map((weight) => weight / total);
}

/** Draws minibatch rows: a class by `classWeights`, then a row of that class uniformly (with replacement). */
export class BalancedBatchSampler {
  private readonly cumulative: Float64Array;

  constructor(
    private readonly trainRows: readonly (readonly number[])[],
    classWeights: Float64Array,
    private readonly prng: Prng,
  ) {
    this.cumulative = new Float64Array(classWeights.length);
    let running = 0;
    classWeights.forEach((weight, index) => {
      running += weight;
      this.cumulative[index] = running;
    });
  }

  /** Fills `out` with row indices. */
  next(out: Int32Array): Int32Array {
    const total = this.cumulative[this.cumulative.length - 1]!;
    for (let i = 0; i < out.length; i++) {
      const label = upperBound(this.cumulative, this.prng.uniform() * total);
      const rows = this.trainRows[label]!;
      out[i] = rows[this.prng.integer(rows.length)]!;
    }
    return out;
  }
}

/** Fisher–Yates shuffle into a new array. */
export function shuffle<T>(items: readonly T[], prng: Prng): T[] {
  const result = [...items];
  for (let i = result.length - 1; i > 0; i--) {
    const j = prng.integer(i + 1);
    [result[i], result[j]] = [result[j]!, result[i]!];
  }
  return result;
}

/** Copies the listed rows into a new row-major block, with their classes one-hot. */
export function gatherRows(
  data: TrainingData,
  rows: ArrayLike<number>,
): { features: Float32Array; classOneHot: Float32Array } {
  const width = data.width;
  const classCount = data.classNames.length;
  const features = new Float32Array(rows.length * width);
  const classOneHot = new Float32Array(rows.length * classCount);
  for (let i = 0; i < rows.length; i++) {
    const row = rows[i]!;
    features.set(data.features.subarray(row * width, (row + 1) * width), i * width);
    classOneHot[i * classCount + data.classes[row]!] = 1;
  }
  return { features, classOneHot };
}

/** First index whose cumulative weight exceeds `target` (classes with weight 0 are never chosen). */
function upperBound(cumulative: Float64Array, target: number): number {
  let low = 0;
  let high = cumulative.length - 1;
  while (low < high) {
    const middle = (low + high) >> 1;
    if (cumulative[middle]! > target) high = middle;
    else low = middle + 1;
  }
  return low;
}
