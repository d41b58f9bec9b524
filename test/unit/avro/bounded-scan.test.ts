import fc from 'fast-check';
import type { Type } from 'avsc';
import { describe, expect, it } from 'vitest';
import { scanValue } from '../../../connector/avro/bounded-scan.js';
import { knownSchema } from '../../../connector/avro/known-schema.js';
import { READING_V1 } from './support/schemas.js';

/** Everything the scan walks: each primitive, logical types, named types, nesting and recursion. */
const EVERYTHING = knownSchema(
  {
    type: 'record',
    name: 'Everything',
    fields: [
      { name: 'flag', type: 'boolean' },
      { name: 'small', type: 'int' },
      { name: 'big', type: 'long' },
      { name: 'at', type: { type: 'long', logicalType: 'timestamp-millis' } },
      { name: 'ratio', type: 'float' },
      { name: 'level', type: 'double' },
      { name: 'blob', type: 'bytes' },
      { name: 'text', type: 'string' },
      { name: 'tag', type: { type: 'fixed', name: 'Tag', size: 5 } },
      { name: 'side', type: { type: 'enum', name: 'Side', symbols: ['L', 'R', 'C'] } },
      { name: 'maybe', type: ['null', 'string'] },
      { name: 'either', type: ['int', 'string', 'Side'] },
      { name: 'nothing', type: { type: 'array', items: 'null' } },
      { name: 'grid', type: { type: 'array', items: { type: 'map', values: 'double' } } },
      { name: 'chain', type: ['null', { type: 'record', name: 'Link', fields: [{ name: 'value', type: 'int' }, { name: 'next', type: ['null', 'Link'] }] }] },
      { name: 'reading', type: READING_V1 },
    ],
  },
  'everything.avsc',
);

describe('bounded scan against avsc', () => {
  // Differential check: for any value avsc encodes, the scan accepts it and ends where avsc's encoding
  // ends; any strict prefix is reported as truncated. Values come from fast-check's seeded random.
  it('accepts every valid encoding and reports every strict prefix as truncated', () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 2 ** 31 - 1 }), (seed) => {
        const value = randomValue(EVERYTHING.type, mulberry32(seed), 0);
        const bytes = EVERYTHING.type.toBuffer(value);
        const scanned = scanValue(EVERYTHING.type, bytes, 0);
        if (!scanned.ok || scanned.value !== bytes.length) return false;
        for (const cut of [0, 1, bytes.length >> 1, bytes.length - 1]) {
          const prefix = scanValue(EVERYTHING.type, bytes.subarray(0, cut), 0);
          if (prefix.ok || prefix.problem.code !== 'truncated') return false;
        }
        return true;
      }),
      { numRuns: 500, seed: 7 },
    );
  });

  it('honours block byte sizes in negative-count blocks', () => {
    const ints = knownSchema({ type: 'array', items: 'int' }, 'ints');
    // count −2 (zig-zag 03), byte size 2 (04), items 1 and 2 (02 04), end (00).
    expect(scanValue(ints.type, Buffer.from([0x03, 0x04, 0x02, 0x04, 0x00]), 0)).toEqual({ ok: true, value: 5 });
    const lying = scanValue(ints.type, Buffer.from([0x03, 0x06, 0x02, 0x04, 0x00]), 0);
    expect(lying.ok === false && lying.problem.reason).toMatch(/declares 3 bytes but its items take 2/);
  });

  it('stops recursion at the depth limit', () => {
    const link = knownSchema({ type: 'record', name: 'L', fields: [{ name: 'next', type: ['null', 'L'] }] }, 'l');
    const deep = Buffer.alloc(10_000, 0x02);
    const result = scanValue(link.type, deep, 0, { maxDepth: 100 });
    expect(result.ok === false && result.problem.reason).toMatch(/deeper than 100 levels/);
  });
});

/** mulberry32: a small seeded PRNG (common practice for reproducible tests). */
function mulberry32(seed: number): () => number {
  let state = seed >>> 0;
  return () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

interface TypeShape {
  typeName: string;
  fields?: { name: string; type: TypeShape }[];
  itemsType?: TypeShape;
  valuesType?: TypeShape;
  types?: TypeShape[];
  symbols?: string[];
  size?: number;
  underlyingType?: TypeShape;
  branchName?: string;
}

/** A random valid value of `type`, with lengths and magnitudes spread over varint sizes. */
function randomValue(type: Type, random: () => number, depth: number): unknown {
  const shape = type as unknown as TypeShape;
  const int = (max: number) => Math.floor(random() * max);
  const signed = (bits: number) => Math.round((random() * 2 - 1) * 2 ** int(bits));
  const bytes = () => Buffer.from(Array.from({ length: int(20) }, () => int(256)));
  switch (shape.typeName) {
    case 'boolean':
      return random() < 0.5;
    case 'int':
      return signed(31);
    case 'long':
      return signed(53);
    case 'float':
      return Math.fround(signed(20) / 7);
    case 'double':
      return signed(50) / 3;
    case 'bytes':
      return bytes();
    case 'string':
      return 'é𝄞x'.repeat(int(6));
    case 'fixed':
      return Buffer.alloc(shape.size ?? 0, int(256));
    case 'enum':
      return shape.symbols![int(shape.symbols!.length)];
    case 'null':
      return null;
    case 'array':
      return Array.from({ length: int(depth > 2 ? 2 : 6) }, () => randomValue(shape.itemsType as unknown as Type, random, depth + 1));
    case 'map':
      return Object.fromEntries(Array.from({ length: int(4) }, (_, i) => [`k${i}`, randomValue(shape.valuesType as unknown as Type, random, depth + 1)]));
    case 'record':
      return Object.fromEntries(shape.fields!.map((field) => [field.name, randomValue(field.type as unknown as Type, random, depth + 1)]));
    case 'union:unwrapped': {
      const branches = shape.types!;
      // Recursive branches: stop the chain after a few links.
      const branch = depth > 4 ? branches[0]! : branches[int(branches.length)]!;
      return randomValue(branch as unknown as Type, random, depth + 1);
    }
    case 'union:wrapped': {
      const branch = shape.types![int(shape.types!.length)]!;
      return { [branch.branchName!]: randomValue(branch as unknown as Type, random, depth + 1) };
    }
    default:
      return randomValue(shape.underlyingType as unknown as Type, random, depth);
  }
}
