/**
 * Seeded randomness, entirely in JS so a draw is the same on every tensor backend.
 *
 * - SplitMix64 (Steele, Lea & Flood 2014) expands a 64-bit seed into generator state.
 * - xoshiro128** (Blackman & Vigna 2018) is the workhorse: 32-bit operations only, so it is fast
 *   without BigInt.
 * - FNV-1a 64 hashes a provenance key, so the stream for (seed, model id, topic, partition, offset,
 *   sample index) is fixed and any synthetic record can be regenerated from its tags.
 */

import { UsageError } from '../config/errors.js';

const MASK_64 = (1n << 64n) - 1n;
const FNV_OFFSET_BASIS_64 = 0xcbf29ce484222325n;
const FNV_PRIME_64 = 0x100000001b3n;
const TWO_POW_MINUS_53 = 1 / 2 ** 53;

/** A seed as users write it: a non-negative safe integer, or any bigint (taken modulo 2^64). */
export type Seed = number | bigint;

/** Where a source record sits; Kafka offsets are int64, so they may arrive as bigint or decimal string. */
export interface RecordKey {
  readonly topic: string;
  readonly partition: number;
  readonly offset: number | bigint | string;
}

/** SplitMix64: one 64-bit output per call; used to seed xoshiro and to mix seeds. */
export class SplitMix64 {
  private state: bigint;

  constructor(seed: Seed) {
    this.state = toUint64(seed);
  }

  next(): bigint {
    this.state = (this.state + 0x9e3779b97f4a7c15n) & MASK_64;
    return mix64(this.state);
  }
}

/** The SplitMix64 output function (a strong 64-bit bit mixer). */
export function mix64(value: bigint): bigint {
  let z = value & MASK_64;
  z = ((z ^ (z >> 30n)) * 0xbf58476d1ce4e5b9n) & MASK_64;
  z = ((z ^ (z >> 27n)) * 0x94d049bb133111ebn) & MASK_64;
  return z ^ (z >> 31n);
}

/** FNV-1a, 64-bit, over bytes. */
export function fnv1a64(bytes: Uint8Array): bigint {
  let hash = FNV_OFFSET_BASIS_64;
  for (const byte of bytes) {
    hash = ((hash ^ BigInt(byte)) * FNV_PRIME_64) & MASK_64;
  }
  return hash;
}

/** A uniform, normal and categorical source over xoshiro128**. */
export class Prng {
  private s0: number;
  private s1: number;
  private s2: number;
  private s3: number;
  private spareNormal: number | undefined;

  /** Starts from four 32-bit words of state (not all zero); most callers want `createPrng`. */
  constructor(state: readonly [number, number, number, number]) {
    [this.s0, this.s1, this.s2, this.s3] = state.map((word) => word >>> 0) as [number, number, number, number];
    if ((this.s0 | this.s1 | this.s2 | this.s3) === 0) this.s3 = 0x9e3779b9;
  }

  /** xoshiro128**: a uniform 32-bit unsigned integer. */
  nextUint32(): number {
    const result = Math.imul(rotl(Math.imul(this.s1, 5), 7), 9) >>> 0;
    const t = this.s1 << 9;
    this.s2 ^= this.s0;
    this.s3 ^= this.s1;
    this.s1 ^= this.s2;
    this.s0 ^= this.s3;
    this.s2 ^= t;
    this.s3 = rotl(this.s3, 11);
    return result;
  }

  /** A uniform double in [0, 1) with 53 random bits (two outputs). */
  uniform(): number {
    const high = this.nextUint32() >>> 5;
    const low = this.nextUint32() >>> 6;
    return (high * 67108864 + low) * TWO_POW_MINUS_53;
  }

  /** A standard normal deviate: Box–Muller, the second value of each pair kept for the next call. */
  normal(): number {
    if (this.spareNormal !== undefined) {
      const spare = this.spareNormal;
      this.spareNormal = undefined;
      return spare;
    }
    const radius = Math.sqrt(-2 * Math.log(1 - this.uniform()));
    const angle = 2 * Math.PI * this.uniform();
    this.spareNormal = radius * Math.sin(angle);
    return radius * Math.cos(angle);
  }

  /** Fills `out` with standard normal deviates and returns it. */
  fillNormal(out: Float32Array): Float32Array {
    for (let i = 0; i < out.length; i++) out[i] = this.normal();
    return out;
  }

  /** An integer uniform on [0, bound). */
  integer(bound: number): number {
    return Math.floor(this.uniform() * bound);
  }

  /**
   * An index drawn with probability proportional to `weights` (non-negative, not all zero), by
   * inverse-CDF on one uniform (common practice).
   */
  categorical(weights: ArrayLike<number>): number {
    let total = 0;
    for (let i = 0; i < weights.length; i++) total += weights[i]!;
    let target = this.uniform() * total;
    for (let i = 0; i < weights.length; i++) {
      target -= weights[i]!;
      if (target < 0) return i;
    }
    // Rounding can leave a sliver past the last bucket: return the last positive weight.
    for (let i = weights.length - 1; i >= 0; i--) if (weights[i]! > 0) return i;
    return weights.length - 1;
  }
}

/** A general-purpose generator for a seed (weight init, minibatches, splits). */
export function createPrng(seed: Seed): Prng {
  return prngFromSeed64(toUint64(seed));
}

/**
 * The stream that supplies every random draw of synthetic sample `sampleIndex` of the record at
 * `key`, under `seed` and model `modelId`. Fixed for those inputs: regenerating from provenance
 * tags replays exactly the same draws. (For many samples, `recordStreams` hashes the key once.)
 */
export function streamFor(seed: Seed, modelId: string, key: RecordKey, sampleIndex: number): Prng {
  return recordStreams(seed, modelId, key).sample(sampleIndex);
}

/** The streams of one record: `sample(i)` equals `streamFor(seed, modelId, key, i)`. */
export interface RecordStreams {
  sample(sampleIndex: number): Prng;
}

/**
 * Stream i is seeded by SplitMix64 from mix64(seed) XOR FNV-1a-64 of the UTF-8 text
 * `["raretide.sample",modelId,topic,partition,"offset",i]` (JSON keeps the parts unambiguous
 * whatever characters they hold). The text's prefix is hashed once per record, and all 64-bit
 * arithmetic runs on 32-bit halves: no BigInt on the per-sample path.
 */
export function recordStreams(seed: Seed, modelId: string, key: RecordKey): RecordStreams {
  const offset = BigInt(key.offset).toString();
  const prefix = JSON.stringify(['raretide.sample', modelId, key.topic, key.partition, offset]).slice(0, -1);
  const prefixHash = new Fnv1a64Words();
  prefixHash.update(`${prefix},`);
  const seedMix = mix64(toUint64(seed));
  const seedHigh = Number(seedMix >> 32n);
  const seedLow = Number(seedMix & 0xffffffffn);
  return {
    sample(sampleIndex: number): Prng {
      if (!Number.isSafeInteger(sampleIndex) || sampleIndex < 0) {
        throw new UsageError(`sample index must be a whole number ≥ 0, got ${sampleIndex}`);
      }
      const hash = prefixHash.copy();
      hash.update(`${sampleIndex}]`);
      return prngFromSeedWords((seedHigh ^ hash.high) >>> 0, (seedLow ^ hash.low) >>> 0);
    },
  };
}

/** FNV-1a 64 on two 32-bit words (same results as `fnv1a64`); ASCII-only updates are UTF-8 as is. */
export class Fnv1a64Words {
  high = 0xcbf29ce4;
  low = 0x84222325;

  update(text: string): void {
    const bytes = /^[\x00-\x7f]*$/.test(text) ? undefined : new TextEncoder().encode(text);
    const length = bytes === undefined ? text.length : bytes.length;
    for (let i = 0; i < length; i++) {
      const byte = bytes === undefined ? text.charCodeAt(i) : bytes[i]!;
      const low = (this.low ^ byte) >>> 0;
      // × 0x100000001b3 = × 0x1b3 + × 2^40: the 2^40 term adds (low << 8) to the high word.
      const product = low * 0x1b3;
      const carry = Math.floor(product / 0x100000000);
      this.low = product >>> 0;
      this.high = (Math.imul(this.high, 0x1b3) + (low << 8) + carry) >>> 0;
    }
  }

  copy(): Fnv1a64Words {
    const copy = new Fnv1a64Words();
    copy.high = this.high;
    copy.low = this.low;
    return copy;
  }
}

function prngFromSeed64(seed64: bigint): Prng {
  return prngFromSeedWords(Number((seed64 >> 32n) & 0xffffffffn), Number(seed64 & 0xffffffffn));
}

/** xoshiro128** state from the first two SplitMix64 outputs of a seed given as 32-bit halves. */
function prngFromSeedWords(high: number, low: number): Prng {
  const state = new Uint32Array(4);
  let [stateHigh, stateLow] = [high, low];
  for (let i = 0; i < 2; i++) {
    [stateHigh, stateLow] = add64(stateHigh, stateLow, 0x9e3779b9, 0x7f4a7c15);
    const [mixedHigh, mixedLow] = mix64Words(stateHigh, stateLow);
    state[2 * i] = mixedLow;
    state[2 * i + 1] = mixedHigh;
  }
  return new Prng([state[0]!, state[1]!, state[2]!, state[3]!]);
}

/** `mix64` on 32-bit halves. */
function mix64Words(high: number, low: number): [number, number] {
  let h = high;
  let l = low;
  l = (l ^ ((l >>> 30) | (h << 2))) >>> 0;
  h = (h ^ (h >>> 30)) >>> 0;
  [h, l] = mul64(h, l, 0xbf58476d, 0x1ce4e5b9);
  l = (l ^ ((l >>> 27) | (h << 5))) >>> 0;
  h = (h ^ (h >>> 27)) >>> 0;
  [h, l] = mul64(h, l, 0x94d049bb, 0x133111eb);
  l = (l ^ ((l >>> 31) | (h << 1))) >>> 0;
  h = (h ^ (h >>> 31)) >>> 0;
  return [h, l];
}

/** (a + b) mod 2^64 on 32-bit halves. */
function add64(aHigh: number, aLow: number, bHigh: number, bLow: number): [number, number] {
  const low = aLow + bLow;
  const carry = low > 0xffffffff ? 1 : 0;
  return [(aHigh + bHigh + carry) >>> 0, low >>> 0];
}

/** (a × b) mod 2^64 on 32-bit halves; the low-word product is split into 16-bit limbs to stay exact. */
function mul64(aHigh: number, aLow: number, bHigh: number, bLow: number): [number, number] {
  const a0 = aLow & 0xffff;
  const a1 = aLow >>> 16;
  const b0 = bLow & 0xffff;
  const b1 = bLow >>> 16;
  const middle = a0 * b1 + a1 * b0;
  const lowFull = a0 * b0 + (middle % 0x10000) * 0x10000;
  const carry = a1 * b1 + Math.floor(middle / 0x10000) + Math.floor(lowFull / 0x100000000);
  const high = (carry + Math.imul(aHigh, bLow) + Math.imul(aLow, bHigh)) >>> 0;
  return [high, lowFull >>> 0];
}

function toUint64(seed: Seed): bigint {
  if (typeof seed === 'number' && !Number.isSafeInteger(seed)) {
    throw new UsageError(`seed must be a whole number (or a bigint), got ${seed}: set it to an integer such as 42`);
  }
  return BigInt(seed) & MASK_64;
}

function rotl(value: number, shift: number): number {
  return (value << shift) | (value >>> (32 - shift));
}
