import avro from 'avsc';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { FieldPolicy } from '../../../model/features/index.js';
import { FeatureCodec } from '../../../model/features/index.js';
import { seededRandom } from '../../support/seeded-random.js';
import { allowedOverrides, labelCandidates, recordSchemaNode, toAvroSchema, valueOf } from './random-schemas.js';

/** The value at a dotted path, or `undefined` when a record on the way is null. */
function valueAt(record: unknown, path: string): unknown {
  let value = record;
  for (const segment of path.split('.')) {
    if (value === null || value === undefined) return undefined;
    value = (value as Record<string, unknown>)[segment];
  }
  return value;
}

/** Deep equality where finite numbers may differ by 1e-9 relative and non-finite source numbers match anything. */
function sameRecordValue(actual: unknown, expected: unknown): boolean {
  if (typeof expected === 'number') {
    if (!Number.isFinite(expected)) return typeof actual === 'number';
    return typeof actual === 'number' && Math.abs(actual - expected) <= 1e-9 * Math.abs(expected);
  }
  if (Buffer.isBuffer(expected)) return Buffer.isBuffer(actual) && actual.equals(expected);
  if (expected === null || typeof expected !== 'object') return actual === expected;
  if (actual === null || typeof actual !== 'object') return false;
  const keys = Object.keys(expected);
  return keys.length === Object.keys(actual).length && keys.every((key) => sameRecordValue((actual as Record<string, unknown>)[key], (expected as Record<string, unknown>)[key]));
}

const featureValue = fc.oneof(
  { arbitrary: fc.double(), weight: 3 },
  { arbitrary: fc.double({ min: -4, max: 4, noNaN: true }), weight: 3 },
  { arbitrary: fc.constantFrom(Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY, 1e30, -1e30, 0, 0.5, 1), weight: 2 },
);

/** A random schema, records conforming to it, valid codec options and raw feature values. */
const scenario = recordSchemaNode.chain((node) => {
  const overrides = allowedOverrides(node);
  const labels = labelCandidates(node);
  return fc.record({
    node: fc.constant(node),
    records: fc.array(valueOf(node) as fc.Arbitrary<Record<string, unknown>>, { minLength: 1, maxLength: 12 }),
    label: labels.length === 0 ? fc.constant(undefined) : fc.option(fc.constantFrom(...labels), { nil: undefined }),
    overrides: overrides.length === 0 ? fc.constant([]) : fc.subarray(overrides, { maxLength: Math.min(4, overrides.length) }),
    maxCategories: fc.integer({ min: 1, max: 8 }),
    quantiles: fc.oneof(fc.constant(1024), fc.integer({ min: 2, max: 6 })),
    featurePool: fc.array(featureValue, { minLength: 97, maxLength: 97 }),
    seed: fc.integer({ min: 0, max: 2 ** 31 }),
  });
});

/** One policy per path, none inside a record already overridden, none on the label. */
function consistentPolicies(overrides: readonly { path: string; policy: FieldPolicy }[], label: string | undefined): Record<string, FieldPolicy> {
  const policies: Record<string, FieldPolicy> = {};
  for (const { path, policy } of overrides) {
    const coveredByAncestor = Object.keys(policies).some((other) => path.startsWith(`${other}.`) || other.startsWith(`${path}.`));
    if (path === label || path in policies || coveredByAncestor) continue;
    policies[path] = policy;
  }
  return policies;
}

describe('feature codec on random schemas (property)', () => {
  it('decodes any feature vector to a schema-valid record, copy fields identical to the source', () => {
    fc.assert(
      fc.property(scenario, ({ node, records, label, overrides, maxCategories, quantiles, featurePool, seed }) => {
        const schema = toAvroSchema(node) as Record<string, unknown>;
        const type = avro.Type.forSchema(schema as avro.Schema);
        for (const record of records) expect(type.isValid(record)).toBe(true);
        const policies = consistentPolicies(overrides, label);
        const codec = FeatureCodec.fromSample(schema, records, { labelPath: label, policies, maxCategories, quantiles });
        const restored = FeatureCodec.fromJSON(JSON.parse(JSON.stringify(codec)));
        const rows = codec.describe().rows;
        const copied = rows.filter((row) => row.policy === 'copy' || row.policy === 'label').map((row) => row.path);
        const nulled = rows.filter((row) => row.policy === 'null').map((row) => row.path);
        const random = seededRandom(seed);
        const exactMarginals = quantiles >= records.length;

        records.forEach((record, index) => {
          const features = codec.encode(record);
          expect(features.every(Number.isFinite)).toBe(true);
          expect(restored.encode(record)).toEqual(features);

          const roundTrip = codec.decode(features, record, { random });
          expect(type.isValid(roundTrip)).toBe(true);
          if (exactMarginals && Object.keys(policies).length === 0) expect(sameRecordValue(roundTrip, record)).toBe(true);

          const vector = Float32Array.from({ length: codec.width }, (_, i) => featurePool[(i * 31 + index * 7) % featurePool.length]!);
          const decoded = codec.decode(vector, record, { random });
          expect(type.isValid(decoded)).toBe(true);
          for (const path of copied) {
            const value = valueAt(decoded, path);
            if (value !== undefined) expect(value).toBe(valueAt(record, path));
          }
          for (const path of nulled) {
            const parent = path.includes('.') ? valueAt(decoded, path.slice(0, path.lastIndexOf('.'))) : decoded;
            if (parent !== null && parent !== undefined) expect(valueAt(decoded, path)).toBeNull();
          }
          expect(restored.decode(vector, record, { random: seededRandom(seed) })).toEqual(codec.decode(vector, record, { random: seededRandom(seed) }));
        });
      }),
      { numRuns: 200 },
    );
  });
});
