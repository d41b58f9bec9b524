import avro from 'avsc';
import { describe, expect, it } from 'vitest';
import { RaretideError } from '../../../config/errors.js';
import {
  fromHeaders,
  fromProvenanceRecord,
  PROVENANCE_FIELD,
  PROVENANCE_HEADERS,
  PROVENANCE_RECORD_SCHEMA,
  provenanceHeaderTable,
  type ProvenanceTag,
  type SyntheticTag,
  toHeaders,
  toProvenanceRecord,
} from '../../../connector/pipeline/provenance.js';
import { seededUniform } from './seeded-uniform.js';

const SYNTHETIC: SyntheticTag = {
  kind: 'synthetic',
  source: { topic: 'parcel-scans', partition: 2, offset: 1_048_576n },
  modelId: '9c1e5f0a7b3d2e64',
  sampleIndex: 3,
  seed: 1n,
  temperature: 0.8,
};

/** Headers as node-rdkafka delivers them on consume: one `{name: Buffer}` object each. */
function asConsumed(headers: { [name: string]: string }[]): { [name: string]: Buffer }[] {
  return headers.map((header) => Object.fromEntries(Object.entries(header).map(([name, value]) => [name, Buffer.from(value, 'utf8')])));
}

function without(name: string, headers: { [name: string]: string }[]) {
  return headers.filter((header) => !(name in header));
}

describe('provenance headers', () => {
  it('writes every header as text, in a fixed order', () => {
    expect(toHeaders(SYNTHETIC)).toEqual([
      { 'raretide.kind': 'synthetic' },
      { 'raretide.source.topic': 'parcel-scans' },
      { 'raretide.source.partition': '2' },
      { 'raretide.source.offset': '1048576' },
      { 'raretide.model': '9c1e5f0a7b3d2e64' },
      { 'raretide.sample': '3' },
      { 'raretide.seed': '1' },
      { 'raretide.temperature': '0.8' },
    ]);
    const original: ProvenanceTag = { kind: 'original', source: SYNTHETIC.source };
    expect(toHeaders(original).map((header) => Object.keys(header)[0])).toEqual([
      'raretide.kind',
      'raretide.source.topic',
      'raretide.source.partition',
      'raretide.source.offset',
    ]);
  });

  it('round-trips synthetic and original tags through consumed (Buffer) headers, ignoring foreign headers', () => {
    const original: ProvenanceTag = { kind: 'original', source: { topic: 'a.b_c-d', partition: 0, offset: 0n } };
    for (const tag of [SYNTHETIC, original]) {
      const consumed = [{ 'trace-id': Buffer.from([0xff, 0x00]) }, ...asConsumed(toHeaders(tag))];
      expect(fromHeaders(consumed)).toEqual({ ok: true, value: tag });
    }
  });

  it('keeps int64 offsets and 64-bit seeds exact beyond 2^53', () => {
    // 2^53 + 1 is the first integer a double cannot hold; 2^63 − 1 and 2^64 − 1 are the int64/uint64 maxima.
    for (const [offset, seed] of [
      [9_007_199_254_740_993n, 18_446_744_073_709_551_615n],
      [9_223_372_036_854_775_807n, 0n],
    ] as const) {
      const tag = { ...SYNTHETIC, source: { ...SYNTHETIC.source, offset }, seed };
      const headers = toHeaders(tag);
      expect(headers[3]).toEqual({ 'raretide.source.offset': offset.toString() });
      expect(fromHeaders(asConsumed(headers))).toEqual({ ok: true, value: tag });
    }
  });

  it('round-trips temperatures exactly, including awkward doubles', () => {
    const random = seededUniform(17);
    const temperatures = [
      1, 0.1, 1 / 3, 0.7999999999999999, 1e-7, 1.5e21, Number.MIN_VALUE, Number.MAX_VALUE, 2 ** -1074 * 3,
      ...Array.from({ length: 200 }, () => random.uniform() * 4 + Number.EPSILON),
    ];
    for (const temperature of temperatures) {
      const result = fromHeaders(asConsumed(toHeaders({ ...SYNTHETIC, temperature })));
      expect(result.ok && result.value.kind === 'synthetic' && Object.is(result.value.temperature, temperature)).toBe(true);
    }
  });

  it.each(Object.values(PROVENANCE_HEADERS))('names a missing %s', (name) => {
    const result = fromHeaders(asConsumed(without(name, toHeaders(SYNTHETIC))));
    expect(result).toEqual({ ok: false, problem: { code: 'missing-header', name, reason: `${name} is missing` } });
  });

  it.each([
    ['raretide.kind', 'made-up', 'bad-header', /expected "synthetic" or "original"/],
    ['raretide.source.partition', '-1', 'bad-header', /decimal whole number from 0 to 2147483647/],
    ['raretide.source.offset', '007', 'bad-header', /"007"/],
    ['raretide.source.offset', '9223372036854775808', 'bad-header', /to 9223372036854775807/],
    ['raretide.sample', '1.0', 'bad-header', /"1.0"/],
    ['raretide.seed', '18446744073709551616', 'bad-header', /to 18446744073709551615/],
    ['raretide.temperature', '0', 'bad-header', /> 0/],
    ['raretide.temperature', 'NaN', 'bad-header', /"NaN"/],
    ['raretide.temperature', ' 1', 'bad-header', /" 1"/],
    ['raretide.model', '', 'bad-header', /is empty/],
  ])('rejects %s = %j', (name, value, code, reason) => {
    const headers = toHeaders(SYNTHETIC).map((header) => (name in header ? { [name]: value } : header));
    const result = fromHeaders(headers);
    expect(result.ok).toBe(false);
    if (!result.ok) {
      expect(result.problem).toMatchObject({ code, name });
      expect(result.problem.reason).toMatch(reason);
    }
  });

  it('rejects duplicates, invalid UTF-8 and synthetic-only headers on an original', () => {
    const headers = toHeaders(SYNTHETIC);
    expect(fromHeaders([...headers, { 'raretide.seed': '2' }])).toMatchObject({ ok: false, problem: { code: 'duplicate-header', name: 'raretide.seed' } });
    const badBytes = [...asConsumed(without('raretide.source.topic', headers)), { 'raretide.source.topic': Buffer.from([0xc3, 0x28]) }];
    expect(fromHeaders(badBytes)).toMatchObject({ ok: false, problem: { code: 'bad-header', name: 'raretide.source.topic' } });
    const original = [...toHeaders({ kind: 'original', source: SYNTHETIC.source }), { 'raretide.model': 'x' }];
    expect(fromHeaders(original)).toMatchObject({ ok: false, problem: { code: 'unexpected-header', name: 'raretide.model' } });
  });

  it('refuses to write a malformed tag', () => {
    expect(() => toHeaders({ ...SYNTHETIC, temperature: Number.NaN })).toThrow(RaretideError);
    expect(() => toHeaders({ ...SYNTHETIC, sampleIndex: -1 })).toThrow(/sample index -1/);
  });

  it('renders the README table from the same specification', () => {
    const table = provenanceHeaderTable().split('\n');
    expect(table[0]).toBe('| Header | Meaning | Example |');
    expect(table).toHaveLength(2 + Object.keys(PROVENANCE_HEADERS).length);
    Object.values(PROVENANCE_HEADERS).forEach((name, index) => expect(table[2 + index]).toMatch(new RegExp(`^\\| \`${name.replace(/\./g, '\\.')}\` \\| .+ \\| \`.+\` \\|$`)));
  });
});

describe('provenance field in Avro file output', () => {
  // avsc parses the schema per the Avro specification and writes/reads the binary encoding.
  const fieldType = avro.Type.forSchema(PROVENANCE_FIELD.type as unknown as avro.Schema, { wrapUnions: 'auto' });

  it('is a valid Avro schema whose record round-trips through binary encoding', () => {
    expect(avro.Type.forSchema(PROVENANCE_RECORD_SCHEMA as unknown as avro.Schema).name).toBe('raretide.SyntheticProvenance');
    const value = toProvenanceRecord(SYNTHETIC);
    const decoded = fieldType.fromBuffer(fieldType.toBuffer(value));
    expect(fromProvenanceRecord(decoded)).toEqual({ ok: true, value: SYNTHETIC });
  });

  it('carries null for an original', () => {
    const value = toProvenanceRecord({ kind: 'original', source: SYNTHETIC.source });
    expect(value).toBeNull();
    expect(fieldType.toBuffer(value)).toEqual(Buffer.from([0])); // union branch 0 = null
    expect(fromProvenanceRecord(null)).toEqual({ ok: true, value: null });
  });

  it('refuses offsets avsc cannot hold exactly, and names a bad field on read', () => {
    expect(() => toProvenanceRecord({ ...SYNTHETIC, source: { ...SYNTHETIC.source, offset: 2n ** 53n } })).toThrow(/sourceOffset/);
    const record = toProvenanceRecord(SYNTHETIC)!;
    expect(fromProvenanceRecord({ ...record, sampleIndex: -2 })).toMatchObject({ ok: false, problem: { code: 'bad-field', name: 'sampleIndex' } });
    expect(fromProvenanceRecord({ ...record, temperature: 0 })).toMatchObject({ ok: false, problem: { code: 'bad-field', name: 'temperature' } });
    expect(fromProvenanceRecord('x')).toMatchObject({ ok: false, problem: { code: 'bad-field', name: 'raretide_provenance' } });
  });
});
