/**
 * mulberry32: a tiny, fast 32-bit PRNG, so generated test data is the same on every run.
 * (Tommy Ettinger's public-domain generator; constants written from memory of its widely
 * copied reference code — any fixed mixing works here, the point is determinism.)
 */
export function seededRandom(seed: number): () => number {
  let state = seed >>> 0;
  return () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
