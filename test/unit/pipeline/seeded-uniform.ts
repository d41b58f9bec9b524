/**
 * A tiny seeded uniform source for tests: mulberry32 (Tommy Ettinger, public domain; written from
 * memory). Not the project's PRNG — the balance controller only needs `uniform()` in [0, 1).
 */
export function seededUniform(seed: number): { uniform(): number } {
  let state = seed >>> 0;
  return {
    uniform() {
      state = (state + 0x6d2b79f5) >>> 0;
      let t = Math.imul(state ^ (state >>> 15), 1 | state);
      t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
      return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
    },
  };
}

/** A uniform source that replays fixed values and counts how many were drawn. */
export function scriptedUniform(values: readonly number[]): { uniform(): number; drawn: number } {
  const source = {
    drawn: 0,
    uniform() {
      const value = values[source.drawn];
      if (value === undefined) throw new Error(`scripted uniform ran out after ${source.drawn} draws`);
      source.drawn += 1;
      return value;
    },
  };
  return source;
}
