import avro from 'avsc';
import { describe, expect, it } from 'vitest';
import { RaretideError, UsageError } from '../../../config/errors.js';
import { FeatureCodec, renderFieldTable } from '../../../model/features/index.js';
import { looksLikeIdentifier } from '../../../model/features/infer-plan.js';
import { seededRandom } from '../../support/seeded-random.js';
import { berthVisitSchema, berthVisits } from './berth-visits.js';

const type = avro.Type.forSchema(berthVisitSchema as unknown as avro.Schema);
const sample = berthVisits(400);
const codec = FeatureCodec.fromSample(berthVisitSchema, sample, { labelPath: 'outcome' });

function errorOf(action: () => unknown): Error {
  try {
    action();
  } catch (error) {
    return error as Error;
  }
  throw new Error('expected an error');
}

describe('feature codec: inferred field policies', () => {
  const rows = new Map(codec.describe().rows.map((row) => [row.path, row]));

  it.each([
    ['visitId', 'copy', 'none', 0, 'logical type uuid'],
    ['vesselCode', 'copy', 'none', 0, 'distinct values'],
    ['berth', 'learn', 'categorical', 3, 'enum'],
    ['arrivedAt', 'copy', 'none', 0, 'logical type timestamp-millis'],
    ['draughtM', 'learn', 'continuous', 1, 'numeric'],
    ['crew', 'learn', 'continuous', 1, 'numeric'],
    ['pilotOnBoard', 'learn', 'categorical', 2, 'boolean'],
    ['flag', 'learn', 'categorical', 5, 'distinct values'],
    ['windKnots', 'learn', 'presence + continuous', 2, 'numeric'],
    ['cargo.teu', 'learn', 'continuous', 1, 'numeric'],
    ['cargo.hazard', 'learn', 'presence + categorical', 4, 'enum'],
    ['cargo.manifestRef', 'copy', 'none', 0, 'distinct values'],
    ['inspection', 'learn', 'presence', 1, 'nullable'],
    ['inspection.score', 'learn', 'continuous', 1, 'numeric'],
    ['inspection.passed', 'learn', 'categorical', 2, 'boolean'],
    ['delayNote', 'learn', 'presence', 1, 'nullable'],
    ['delayNote.author', 'copy', 'none', 0, 'distinct values'],
    ['delayNote.minutes', 'learn', 'continuous', 1, 'numeric'],
    ['tags', 'copy', 'none', 0, 'array'],
    ['tideReadings', 'copy', 'none', 0, 'map'],
    ['checksum', 'copy', 'none', 0, 'fixed'],
    ['payload', 'copy', 'none', 0, 'bytes'],
    ['quayRef', 'copy', 'none', 0, 'union'],
    ['outcome', 'label', 'none', 0, 'label'],
  ])('%s → %s (%s, width %i)', (path, policy, encoding, width, reason) => {
    const row = rows.get(path);
    expect(row).toBeDefined();
    expect([row?.policy, row?.encoding, row?.width]).toEqual([policy, encoding, width]);
    expect(row?.reason).toContain(reason);
  });

  it('lays the blocks out without gaps, gating nullable values by their presence feature', () => {
    const blocks = new Map(codec.layout.blocks.map((block) => [`${block.kind}:${block.path}`, block]));
    expect(codec.width).toBe(codec.layout.blocks.reduce((sum, block) => sum + block.width, 0));
    expect(codec.width).toBe(3 + 1 + 1 + 2 + 5 + 2 + 1 + 1 + 3 + 1 + 1 + 2 + 1 + 1);
    const windPresence = blocks.get('presence:windKnots')!;
    expect(blocks.get('continuous:windKnots')).toMatchObject({ gatedBy: windPresence.offset });
    expect(blocks.get('categorical:cargo.hazard')).toMatchObject({ gatedBy: blocks.get('presence:cargo.hazard')!.offset });
    expect(blocks.get('continuous:inspection.score')).toMatchObject({ gatedBy: blocks.get('presence:inspection')!.offset });
    expect(blocks.get('continuous:draughtM')).not.toHaveProperty('gatedBy');
  });

  it('gives each table row the offset of its first block', () => {
    for (const row of codec.describe().rows.filter((r) => r.width > 0)) {
      expect(codec.layout.blocks.find((block) => block.offset === row.offset)?.path).toBe(row.path);
    }
  });

  it('orders string categories by sample frequency, so the unseen-value fallback is the most frequent', () => {
    const flag = codec.layout.blocks.find((block) => block.path === 'flag' && block.kind === 'categorical');
    expect(flag?.kind === 'categorical' && flag.categories[0]).toBe('NO');
    const features = codec.encode({ ...sample[0]!, flag: 'XX' });
    expect(Array.from(features.subarray(flag!.offset, flag!.offset + flag!.width))).toEqual([1, 0, 0, 0, 0]);
  });
});

describe('feature codec: label', () => {
  it('keeps the label out of the features and lists the classes seen, in enum order', () => {
    expect(codec.layout.blocks.some((block) => block.path === 'outcome')).toBe(false);
    expect(codec.classes).toEqual(['ON_TIME', 'DELAYED', 'INCIDENT']);
    expect(codec.classCounts.reduce((sum, entry) => sum + entry.count, 0)).toBe(sample.length);
    const incident = sample.find((record) => record.outcome === 'INCIDENT')!;
    expect(codec.classOf(incident)).toBe('INCIDENT');
    expect(codec.classIndexOf(incident)).toBe(2);
    expect(codec.classIndexOf({ ...incident, outcome: null })).toBe(-1);
  });

  it('has no classes without a label path', () => {
    const unlabelled = FeatureCodec.fromSample(berthVisitSchema, sample);
    expect(unlabelled.classes).toEqual([]);
    expect(unlabelled.classOf(sample[0]!)).toBeNull();
    // Without a label the outcome enum is just another learned field.
    expect(unlabelled.width).toBe(codec.width + 3);
  });
});

describe('feature codec: encode and decode', () => {
  it('decode(encode(record), record) gives the record back, field for field', () => {
    for (const record of sample) {
      const decoded = codec.decode(codec.encode(record), record);
      expect(decoded).toEqual(record);
      expect(type.isValid(decoded)).toBe(true);
    }
  });

  it('gives valid records for extreme and non-finite features, copying the source fields', () => {
    const random = seededRandom(3);
    const specials = [Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY, 1e30, -1e30, 0, 0.5];
    for (let trial = 0; trial < 200; trial++) {
      const source = sample[trial % sample.length]!;
      const features = Float32Array.from({ length: codec.width }, () =>
        random() < 0.3 ? specials[Math.floor(random() * specials.length)]! : 6 * (random() - 0.5),
      );
      const decoded = codec.decode(features, source);
      expect(type.isValid(decoded)).toBe(true);
      for (const path of ['visitId', 'vesselCode', 'arrivedAt', 'tags', 'tideReadings', 'checksum', 'payload', 'quayRef', 'outcome']) {
        expect(decoded[path]).toBe(source[path]);
      }
      expect((decoded.cargo as Record<string, unknown>).manifestRef).toBe((source.cargo as Record<string, unknown>).manifestRef);
    }
  });

  it('keeps a nullable record with copied fields null when the source has none', () => {
    const onTime = sample.find((record) => record.delayNote === null)!;
    const features = codec.encode(onTime);
    const presence = codec.layout.blocks.find((block) => block.kind === 'presence' && block.path === 'delayNote')!;
    features[presence.offset] = 1;
    expect(codec.decode(features, onTime).delayNote).toBeNull();
  });

  it('encodes batches row by row and decodes any row', () => {
    const batch = codec.encodeBatch(sample.slice(0, 10));
    expect(batch.length).toBe(10 * codec.width);
    expect(Array.from(batch.subarray(3 * codec.width, 4 * codec.width))).toEqual(Array.from(codec.encode(sample[3]!)));
    expect(codec.decode(batch, sample[7]!, { row: 7 })).toEqual(sample[7]);
    expect(errorOf(() => codec.encode(sample[0]!, new Float32Array(codec.width), 1))).toBeInstanceOf(RaretideError);
    expect(errorOf(() => codec.decode(new Float32Array(3), sample[0]!))).toBeInstanceOf(RaretideError);
  });

  it('only ever emits finite features, with exact one-hot groups', () => {
    const features = codec.encodeBatch(sample);
    expect(features.every(Number.isFinite)).toBe(true);
    for (const block of codec.layout.blocks.filter((b) => b.kind === 'categorical' && b.gatedBy === undefined)) {
      for (let row = 0; row < sample.length; row++) {
        const group = features.subarray(row * codec.width + block.offset, row * codec.width + block.offset + block.width);
        expect(group.reduce((sum, x) => sum + x, 0)).toBe(1);
      }
    }
  });
});

describe('feature codec: policy overrides', () => {
  const overridden = FeatureCodec.fromSample(berthVisitSchema, sample, {
    labelPath: 'outcome',
    policies: {
      visitId: 'fresh',
      vesselCode: 'fresh',
      payload: 'fresh',
      checksum: 'fresh',
      windKnots: 'null',
      cargo: 'copy',
      arrivedAt: 'learn',
      'delayNote.author': 'learn',
    },
  });
  const rows = new Map(overridden.describe().rows.map((row) => [row.path, row]));

  it('applies each override and says so', () => {
    expect(rows.get('visitId')).toMatchObject({ policy: 'fresh', reason: 'set in config' });
    expect(rows.get('windKnots')).toMatchObject({ policy: 'null', width: 0 });
    expect(rows.get('cargo')).toMatchObject({ policy: 'copy', width: 0 });
    expect(rows.has('cargo.teu')).toBe(false);
    expect(rows.get('arrivedAt')).toMatchObject({ policy: 'learn', encoding: 'continuous' });
    expect(rows.get('delayNote.author')).toMatchObject({ policy: 'learn', encoding: 'categorical' });
  });

  it('makes fresh identifiers from the random source given, the same for the same seed', () => {
    const source = sample[0]!;
    const features = overridden.encode(source);
    const first = overridden.decode(features, source, { random: seededRandom(11) });
    const again = overridden.decode(features, source, { random: seededRandom(11) });
    const other = overridden.decode(features, source, { random: seededRandom(12) });
    expect(type.isValid(first)).toBe(true);
    expect(first).toEqual(again);
    expect(first.visitId).not.toBe(source.visitId);
    expect(first.visitId).not.toBe(other.visitId);
    expect(first.visitId).toMatch(/^[0-9a-f]{8}-[0-9a-f]{4}-4[0-9a-f]{3}-[89ab][0-9a-f]{3}-[0-9a-f]{12}$/);
    expect(first.vesselCode).toMatch(/^IMO\d{7}$/);
    expect(first.vesselCode).not.toBe(source.vesselCode);
    expect((first.payload as Buffer).length).toBe((source.payload as Buffer).length);
    expect((first.checksum as Buffer).length).toBe(4);
    expect(first.windKnots).toBeNull();
    expect(first.cargo).toBe(source.cargo);
  });

  it('refuses to decode fresh fields without a random source', () => {
    const error = errorOf(() => overridden.decode(overridden.encode(sample[0]!), sample[0]!));
    expect(error).toBeInstanceOf(UsageError);
    expect(error.message).toContain('random');
  });

  it.each([
    [{ draughtM: 'null' }, 'draughtM', 'nullable'],
    [{ tags: 'learn' }, 'tags', '`copy`'],
    [{ draughtM: 'fresh' }, 'draughtM', '`learn`'],
    [{ arrivedAt: 'fresh' }, 'arrivedAt', 'timestamp-millis'],
    [{ cargo: 'null' }, 'cargo', 'nullable'],
    [{ quayRef: 'learn' }, 'quayRef', '`copy`'],
    [{ 'cargo.tonnes': 'copy' }, 'cargo.tonnes', 'cargo.teu'],
    [{ cargo: 'copy', 'cargo.teu': 'learn' }, 'cargo.teu', 'remove one'],
    [{ outcome: 'copy' }, 'outcome', 'label'],
  ] as const)('rejects %o naming the field %s and the fix', (policies, field, fix) => {
    const error = errorOf(() => FeatureCodec.fromSample(berthVisitSchema, sample, { labelPath: 'outcome', policies }));
    expect(error).toBeInstanceOf(UsageError);
    expect(error.message).toContain(`\`${field}\``);
    expect(error.message).toContain(fix);
  });

  it.each([
    [{ labelPath: 'tags' }, '`tags`'],
    [{ labelPath: 'inspection.passed' }, 'nullable record'],
    [{ labelPath: 'nowhere' }, '`nowhere`'],
    [{ quantiles: 1 }, '`quantiles`'],
    [{ maxCategories: 2.5 }, '`maxCategories`'],
  ])('rejects options %o with a message naming %s', (options, text) => {
    const error = errorOf(() => FeatureCodec.fromSample(berthVisitSchema, sample, options));
    expect(error).toBeInstanceOf(UsageError);
    expect(error.message).toContain(text);
  });

  it('rejects a schema that is not a record', () => {
    expect(errorOf(() => FeatureCodec.fromSample('string', []))).toBeInstanceOf(UsageError);
  });
});

describe('feature codec: stored form', () => {
  it('round-trips through JSON text: same layout, same features, same decodes', () => {
    const restored = FeatureCodec.fromJSON(JSON.parse(JSON.stringify(codec)));
    expect(restored.layout).toEqual(codec.layout);
    expect(restored.classes).toEqual(codec.classes);
    expect(restored.describe()).toEqual(codec.describe());
    const random = seededRandom(5);
    for (const record of sample.slice(0, 50)) {
      expect(restored.encode(record)).toEqual(codec.encode(record));
      const features = Float32Array.from({ length: codec.width }, () => 4 * (random() - 0.5));
      expect(restored.decode(features, record)).toEqual(codec.decode(features, record));
    }
  });

  it.each([
    ['another version', (json: Record<string, unknown>) => ({ ...json, version: 2 }), 'version 2'],
    ['another format', (json: Record<string, unknown>) => ({ ...json, format: 'something-else' }), 'format'],
    ['a broken plan', (json: Record<string, unknown>) => ({ ...json, plan: { kind: 'record', path: '', fields: [{ name: 'x', plan: { kind: 'nope' } }] } }), 'plan'],
    ['a broken schema', (json: Record<string, unknown>) => ({ ...json, schema: { type: 'record', name: 'X', fields: [{ name: 'a', type: 'nope' }] } }), 'nope'],
  ])('refuses %s with a features.codec-json error', (_name, corrupt, text) => {
    const json = JSON.parse(JSON.stringify(codec)) as Record<string, unknown>;
    const error = errorOf(() => FeatureCodec.fromJSON(corrupt(json)));
    expect(error).toBeInstanceOf(RaretideError);
    expect((error as RaretideError).code).toBe('features.codec-json');
    expect(error.message).toContain(text);
    expect(error.message).toContain('refit');
  });
});

describe('feature codec: field table', () => {
  it('renders one aligned line per field with policy, encoding, width and summary', () => {
    const text = renderFieldTable(codec.describe());
    const lines = text.trimEnd().split('\n');
    expect(lines[0]).toMatch(/^field\s+type\s+policy\s+encoding\s+width\s+summary or reason$/);
    expect(lines.find((line) => line.startsWith('draughtM '))).toMatch(/double\s+learn\s+continuous\s+1\s+min 4(\.\d+)? · q1 .* · max 1[12](\.\d+)? \(\d+ distinct, all stored\)/);
    expect(lines.find((line) => line.startsWith('flag '))).toMatch(/string\s+learn\s+categorical\s+5\s+NO \d+%, DK \d+%/);
    expect(lines.find((line) => line.startsWith('visitId '))).toMatch(/string \(uuid\)\s+copy\s+-\s+0\s+inferred: logical type uuid/);
    expect(lines.find((line) => line.startsWith('outcome '))).toMatch(/label\s+-\s+0\s+classes: ON_TIME \d+, DELAYED \d+, INCIDENT \d+/);
    expect(lines.at(-1)).toBe(`${codec.width} features from 11 learned fields of 24; sample of 400 records; label \`outcome\``);
  });
});

describe('identifier-like names (copied by default)', () => {
  it.each([
    ['id', true],
    ['ID', true],
    ['order_id', true],
    ['trace-uuid', true],
    ['customerId', true],
    ['userID', true],
    ['sessionGuid', true],
    ['paid', false],
    ['fluid', false],
    ['valid', false],
    ['idle', false],
    ['identity', false],
  ])('%s → %s', (name, expected) => {
    expect(looksLikeIdentifier(name)).toBe(expected);
  });
});
