/**
 * The random streams of one evaluation, keyed by purpose: each draw site (the split, each
 * generator, the bootstrap, …) has its own stream, so adding a draw in one place never shifts
 * another's, and the same seed gives the same report.
 */
import { streamFor, type Prng, type Seed } from '../random.js';

/** Model id under which evaluation streams are keyed (never a real model's content id). */
const EVALUATION_STREAM_ID = 'raretide.evaluate';

/** The stream for `purpose` (e.g. `split/snow`, `smote/snow`), index `index` within it. */
export function evaluationStream(seed: Seed, purpose: string, index = 0): Prng {
  return streamFor(seed, EVALUATION_STREAM_ID, { topic: purpose, partition: 0, offset: 0 }, index);
}

/** The first `count` entries of a seeded permutation of 0 … n − 1 (partial Fisher–Yates). */
export function sampleIndices(n: number, count: number, prng: Prng): number[] {
  const indices = Array.from({ length: n }, (_, i) => i);
  const take = Math.min(n, count);
  for (let i = 0; i < take; i++) {
    const j = i + prng.integer(n - i);
    [indices[i], indices[j]] = [indices[j]!, indices[i]!];
  }
  return indices.slice(0, take);
}
