import { describe, expect, it } from 'vitest';
import { createPrng, Fnv1a64Words, fnv1a64, mix64, Prng, recordStreams, SplitMix64, streamFor } from '../../../model/random.js';

describe('SplitMix64', () => {
  it('matches the published sequence for seed 1234567', () => {
    // Source: Rosetta Code task "Pseudo-random numbers/Splitmix64" (reference outputs for seed 1234567),
    // algorithm of Steele, Lea & Flood, "Fast splittable pseudorandom number generators", OOPSLA 2014.
    const generator = new SplitMix64(1234567);
    const outputs = Array.from({ length: 5 }, () => generator.next());
    expect(outputs).toEqual([
      6457827717110365317n,
      3203168211198807973n,
      9817491932198370423n,
      4593380528125082431n,
      16408922859458223821n,
    ]);
  });
});

describe('xoshiro128**', () => {
  it('matches outputs of the C reference implementation', () => {
    // Source: test data generated with the C reference xoshiro128starstar.c (Blackman & Vigna), as
    // published in the edorfaus/xoshiro-6502 repository (test-rom/testdata.asm, starstar column).
    const prng = new Prng([0x964d4a0c, 0xd40ab895, 0xad7fdecb, 0x3006f0f0]);
    const outputs = Array.from({ length: 4 }, () => prng.nextUint32());
    expect(outputs).toEqual([0xf1391922, 0x6fe53806, 0xa5be2840, 0xf510ee70]);
  });

  it('gives rotl(5·s1, 7)·9 as its first output [calc from the reference algorithm]', () => {
    expect(new Prng([1, 2, 3, 4]).nextUint32()).toBe(11520);
  });
});

describe('FNV-1a 64', () => {
  it('matches the standard test vectors', () => {
    // Source: FNV reference test vectors (Fowler/Noll/Vo, isthe.com/chongo/tech/comp/fnv), as also
    // used by many independent implementations.
    const utf8 = (text: string) => new TextEncoder().encode(text);
    expect(fnv1a64(utf8(''))).toBe(0xcbf29ce484222325n);
    expect(fnv1a64(utf8('a'))).toBe(0xaf63dc4c8601ec8cn);
    expect(fnv1a64(utf8('foobar'))).toBe(0x85944171f73967e8n);
  });
});

describe('draws', () => {
  it('gives uniforms in [0, 1) with mean ½ and variance 1/12', () => {
    const prng = createPrng(7);
    const n = 200_000;
    let sum = 0;
    let sumSquares = 0;
    let outside = 0;
    for (let i = 0; i < n; i++) {
      const u = prng.uniform();
      if (!(u >= 0 && u < 1)) outside++;
      sum += u;
      sumSquares += u * u;
    }
    expect(outside).toBe(0);
    const mean = sum / n;
    // Standard errors: sqrt(1/12/n) ≈ 0.00065 for the mean; tolerance ≈ 5 standard errors.
    expect(Math.abs(mean - 0.5)).toBeLessThan(0.0033);
    expect(Math.abs(sumSquares / n - mean * mean - 1 / 12)).toBeLessThan(0.002);
  });

  it('gives normals with mean 0, variance 1 and P(|x| < 1.959964) ≈ 0.95', () => {
    // Φ⁻¹(0.975) = 1.959964 (handbook normal table).
    const prng = createPrng(11);
    const n = 200_000;
    let sum = 0;
    let sumSquares = 0;
    let inside = 0;
    for (let i = 0; i < n; i++) {
      const x = prng.normal();
      sum += x;
      sumSquares += x * x;
      if (Math.abs(x) < 1.959964) inside++;
    }
    expect(Math.abs(sum / n)).toBeLessThan(0.012);
    expect(Math.abs(sumSquares / n - 1)).toBeLessThan(0.016);
    // Binomial standard error sqrt(0.95·0.05/n) ≈ 0.00049; tolerance ≈ 5 standard errors.
    expect(Math.abs(inside / n - 0.95)).toBeLessThan(0.0025);
  });

  it('draws categories in proportion to their weights', () => {
    const prng = createPrng(3);
    const counts = [0, 0, 0, 0];
    const n = 100_000;
    for (let i = 0; i < n; i++) counts[prng.categorical([1, 0, 3, 6])]!++;
    expect(counts[1]).toBe(0);
    expect(Math.abs(counts[0]! / n - 0.1)).toBeLessThan(0.005);
    expect(Math.abs(counts[2]! / n - 0.3)).toBeLessThan(0.007);
    expect(Math.abs(counts[3]! / n - 0.6)).toBeLessThan(0.007);
  });
});

describe('keyed streams', () => {
  const key = { topic: 'harbour.readings', partition: 3, offset: 1234 };
  const firstDraws = (prng: Prng) => Array.from({ length: 4 }, () => prng.nextUint32());

  it('are fixed by (seed, model id, topic, partition, offset, sample index)', () => {
    expect(firstDraws(streamFor(42, 'model-a', key, 0))).toEqual(firstDraws(streamFor(42, 'model-a', key, 0)));
    // An int64 offset may arrive as a number, a bigint or a decimal string: all name the same stream.
    expect(firstDraws(streamFor(42, 'model-a', { ...key, offset: 1234n }, 0))).toEqual(
      firstDraws(streamFor(42, 'model-a', { ...key, offset: '1234' }, 0)),
    );
  });

  it('change when any part of the key changes', () => {
    const reference = firstDraws(streamFor(42, 'model-a', key, 0));
    const variants = [
      streamFor(43, 'model-a', key, 0),
      streamFor(42, 'model-b', key, 0),
      streamFor(42, 'model-a', { ...key, topic: 'harbour.readings2' }, 0),
      streamFor(42, 'model-a', { ...key, partition: 4 }, 0),
      streamFor(42, 'model-a', { ...key, offset: 1235 }, 0),
      streamFor(42, 'model-a', key, 1),
    ];
    for (const variant of variants) expect(firstDraws(variant)).not.toEqual(reference);
  });
});

describe('fast 32-bit paths against the BigInt reference (differential)', () => {
  const utf8 = (text: string) => new TextEncoder().encode(text);

  it('Fnv1a64Words equals fnv1a64 on ASCII and non-ASCII text', () => {
    const prng = createPrng(5);
    const alphabet = 'abcXYZ019_.-"[],é€𝄞 ';
    for (let trial = 0; trial < 200; trial++) {
      const text = Array.from({ length: prng.integer(40) }, () => [...alphabet][prng.integer([...alphabet].length)]).join('');
      const words = new Fnv1a64Words();
      words.update(text);
      expect((BigInt(words.high) << 32n) | BigInt(words.low)).toBe(fnv1a64(utf8(text)));
    }
  });

  it('streams equal SplitMix64(mix64(seed) ^ FNV-1a-64(key text)) seeding xoshiro128**', () => {
    const prng = createPrng(6);
    for (let trial = 0; trial < 100; trial++) {
      const seed = BigInt(prng.nextUint32()) * 2n ** 32n + BigInt(prng.nextUint32());
      const key = { topic: `t${prng.integer(1000)}`, partition: prng.integer(64), offset: BigInt(prng.nextUint32()) * 1000n };
      const index = prng.integer(1000);
      const text = JSON.stringify(['raretide.sample', 'model-x', key.topic, key.partition, key.offset.toString(), index]);
      const expander = new SplitMix64(mix64(seed) ^ fnv1a64(utf8(text)));
      const first = expander.next();
      const second = expander.next();
      const reference = new Prng([Number(first & 0xffffffffn), Number(first >> 32n), Number(second & 0xffffffffn), Number(second >> 32n)]);
      const fast = recordStreams(seed, 'model-x', key).sample(index);
      expect(Array.from({ length: 3 }, () => fast.nextUint32())).toEqual(Array.from({ length: 3 }, () => reference.nextUint32()));
    }
  });
});
