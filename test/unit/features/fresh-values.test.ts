import { describe, expect, it } from 'vitest';
import { freshIdLike, freshUuid, freshValue } from '../../../model/features/fresh-values.js';
import { seededRandom } from '../../support/seeded-random.js';

describe('fresh identifiers', () => {
  it('makes version-4 UUIDs (RFC 4122 §4.4: version nibble 4, variant bits 10)', () => {
    const random = seededRandom(1);
    const seen = new Set<string>();
    for (let i = 0; i < 1000; i++) {
      const uuid = freshUuid(random);
      expect(uuid).toMatch(/^[0-9a-f]{8}-[0-9a-f]{4}-4[0-9a-f]{3}-[89ab][0-9a-f]{3}-[0-9a-f]{12}$/);
      seen.add(uuid);
    }
    expect(seen.size).toBe(1000);
  });

  it.each([
    ['ORD-2024-00017', /^ORD-\d{4}-\d{5}$/],
    ['IMO9312345', /^IMO\d{7}$/],
    ['a8f3k2', /^a\d[a-z]\d[a-z]\d$/],
    ['Batch 7b', /^Batch \d[a-z]$/],
    ['abc', /^[a-z]{3}$/],
    ['3f2504e0-4f89-11d3-9a0c-0305e82c3301', /^[0-9a-f]{8}-[0-9a-f]{4}-4[0-9a-f]{3}-[89ab][0-9a-f]{3}-[0-9a-f]{12}$/],
    ['', /^[a-z0-9]{16}$/],
    ['--', /^[a-z0-9]{16}$/],
  ])('keeps the shape of %j', (source, shape) => {
    const random = seededRandom(2);
    const fresh = freshIdLike(source, random);
    expect(fresh).toMatch(shape);
    if (source.length > 3) expect(fresh).not.toBe(source);
  });

  it('draws numbers and bytes within the Avro types, repeatably for a seed', () => {
    const random = seededRandom(3);
    for (let i = 0; i < 1000; i++) {
      const int = freshValue('int', 5, random) as number;
      const long = freshValue('long', 5, random) as number;
      expect(Number.isInteger(int) && int >= 0 && int < 2 ** 31).toBe(true);
      expect(Number.isSafeInteger(long) && long >= 0 && long < 2 ** 52).toBe(true);
    }
    expect((freshValue('bytes', Buffer.from([1, 2, 3]), random) as Buffer).length).toBe(3);
    expect((freshValue('fixed', null, random, 12) as Buffer).length).toBe(12);
    expect(freshValue('string', 'X-1', seededRandom(9))).toBe(freshValue('string', 'X-1', seededRandom(9)));
  });
});
