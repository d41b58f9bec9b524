/**
 * The most recent drift scores, a fixed count of them: how many exceed the reference threshold (kept
 * as a running count, so adding a score is O(1)) and their median. A fixed count rather than a time
 * span or a half-life, so the ratio's precision does not depend on the stream's rate: over 1,000
 * scores, a true exceedance rate of 0.01 reads 0.01 ± 0.003 (binomial standard error) [calc].
 */
import { RaretideError } from '../../config/errors.js';
import { quantileOfSorted } from '../../model/drift/reference.js';

export class DriftWindow {
  private readonly scores: Float64Array;
  private next = 0;
  private filled = 0;
  private above = 0;

  /** Keeps the latest `capacity` scores; counts those strictly above `threshold`. */
  constructor(
    readonly capacity: number,
    readonly threshold: number,
  ) {
    if (!Number.isInteger(capacity) || capacity < 1) {
      throw new RaretideError('drift.window', `the drift window needs a capacity that is a whole number ≥ 1, got ${capacity}`);
    }
    this.scores = new Float64Array(capacity);
  }

  add(scores: ArrayLike<number>): void {
    for (let i = 0; i < scores.length; i++) {
      const score = scores[i]!;
      if (this.filled === this.capacity) {
        if (this.scores[this.next]! > this.threshold) this.above -= 1;
      } else {
        this.filled += 1;
      }
      this.scores[this.next] = score;
      if (score > this.threshold) this.above += 1;
      this.next = (this.next + 1) % this.capacity;
    }
  }

  /** Scores held (up to `capacity`). */
  get size(): number {
    return this.filled;
  }

  /** Share of the held scores above the threshold; NaN while empty. */
  exceedanceRatio(): number {
    return this.filled === 0 ? Number.NaN : this.above / this.filled;
  }

  /** Median of the held scores; NaN while empty. */
  median(): number {
    if (this.filled === 0) return Number.NaN;
    return quantileOfSorted(this.scores.slice(0, this.filled).sort(), 0.5);
  }
}
