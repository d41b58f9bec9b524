import avro from 'avsc';
import { describe, expect, it } from 'vitest';
import { canonicalForm, canonicalFormOfText } from '../../../model/avro/canonical-form.js';
import { crc64Avro, schemaFingerprint } from '../../../model/avro/fingerprint.js';
import { knownSchema } from '../../../connector/avro/known-schema.js';
import { SingleObjectFraming } from '../../../connector/avro/single-object-framing.js';
import { AVRO_SCHEMA_TESTS } from './fixtures/avro-schema-tests.js';

const hex = (bytes: Uint8Array): string => Buffer.from(bytes).toString('hex');

describe('zig-zag varints', () => {
  // Source: Avro specification, "Binary Encoding" → "Primitive Types" (table of int/long examples).
  it.each([
    [0, '00'],
    [-1, '01'],
    [1, '02'],
    [-2, '03'],
    [2, '04'],
    [-64, '7f'],
    [64, '8001'],
  ])('long %d encodes as %s', (value, expected) => {
    expect(hex(avro.Type.forSchema('long').toBuffer(value))).toBe(expected);
    expect(hex(avro.Type.forSchema('int').toBuffer(value))).toBe(expected);
  });

  // Source: Avro specification, "Binary Encoding": the string "foo" is 06 66 6f 6f.
  it('string "foo" encodes as 06 66 6f 6f', () => {
    expect(hex(avro.Type.forSchema('string').toBuffer('foo'))).toBe('06666f6f');
  });
});

describe('CRC-64-AVRO fingerprints', () => {
  // Source: Avro specification, "Schema Fingerprints" (published values, signed 64-bit), as listed in
  // ../shared/REFERENCE-FACTS.md; they also appear in apache/avro share/test/data/schema-tests.txt.
  it.each([
    ['"null"', 7195948357588979594n],
    ['"boolean"', -6970731678124411036n],
    ['"int"', 8247732601305521295n],
    ['"long"', -3434872931120570953n],
    ['"string"', -8142146995180207161n],
    ['"float"', 5583340709985441680n],
    ['"double"', -8181574048448539266n],
    ['"bytes"', 5746618253357095269n],
    ['{"name":"foo","type":"record","fields":[]}', -4824392279771201922n],
  ])('%s → %d', (text, expected) => {
    expect(schemaFingerprint(JSON.parse(text)).value).toBe(expected);
  });

  // Source: REFERENCE-FACTS.md: "null" little-endian bytes 8a 8f 25 cc e7 24 dd 63.
  it('writes the fingerprint little-endian', () => {
    const fingerprint = schemaFingerprint('null');
    expect(hex(fingerprint.bytes)).toBe('8a8f25cce724dd63');
    expect(fingerprint.hex).toBe('8a8f25cce724dd63');
  });

  // Source: Avro specification: the fingerprint of empty input is the polynomial seed EMPTY.
  it('gives EMPTY for no bytes', () => {
    expect(crc64Avro(new Uint8Array())).toBe(0xc15d213aa4d7a795n);
  });
});

describe('single-object encoding', () => {
  // Source: REFERENCE-FACTS.md [calc] from the Avro specification, "Single-object encoding":
  // marker C3 01, 8-byte little-endian fingerprint of the canonical form, then the body.
  it.each([
    ['string', 'foo', 'c3 01 c7 03 45 63 72 48 01 8f 06 66 6f 6f'],
    ['long', -1, 'c3 01 b7 1d f4 93 44 e1 54 d0 01'],
  ])('%s %j frames byte for byte', async (schema, value, expected) => {
    const framing = new SingleObjectFraming([knownSchema(schema, 'test')]);
    const framed = framing.frame(value);
    expect(hex(framed)).toBe(expected.replace(/ /g, ''));
    const unframed = await framing.unframe(framed);
    expect(unframed.ok && unframed.value.writer.type.fromBuffer(unframed.value.body)).toBe(value);
  });
});

describe('Parsing Canonical Form', () => {
  // Source: apache/avro share/test/data/schema-tests.txt (see the fixture's header).
  it.each(AVRO_SCHEMA_TESTS)('Avro test case $number', ({ input, canonical, fingerprint }) => {
    expect(canonicalFormOfText(input)).toBe(canonical);
    if (fingerprint !== undefined) expect(schemaFingerprint(JSON.parse(input)).value).toBe(fingerprint);
  });

  // Source: Avro specification, "Parsing Canonical Form for Schemas", rules named in each case.
  it('FULLNAMES: nested named types inherit the enclosing namespace and later references use full names', () => {
    const schema = {
      type: 'record',
      name: 'Reading',
      namespace: 'org.example',
      fields: [
        { name: 'unit', type: { type: 'enum', name: 'Unit', symbols: ['C', 'F'] } },
        { name: 'previous', type: 'Unit' },
        { name: 'station', type: { type: 'record', name: 'other.Station', fields: [{ name: 'code', type: { type: 'fixed', name: 'Code', size: 4 } }] } },
        { name: 'code2', type: 'other.Code' },
      ],
    };
    expect(canonicalForm(schema)).toBe(
      '{"name":"org.example.Reading","type":"record","fields":[' +
        '{"name":"unit","type":{"name":"org.example.Unit","type":"enum","symbols":["C","F"]}},' +
        '{"name":"previous","type":"org.example.Unit"},' +
        '{"name":"station","type":{"name":"other.Station","type":"record","fields":[{"name":"code","type":{"name":"other.Code","type":"fixed","size":4}}]}},' +
        '{"name":"code2","type":"other.Code"}]}',
    );
  });

  it('STRIP + PRIMITIVES: logical types, docs, defaults and order attributes go', () => {
    const schema = {
      type: 'record',
      name: 'r',
      doc: 'dropped',
      fields: [
        { name: 'at', type: { type: 'long', logicalType: 'timestamp-millis' }, doc: 'x', default: 0, order: 'ignore' },
        { name: 'amount', type: { type: 'bytes', logicalType: 'decimal', precision: 9, scale: 2 } },
        { name: 'tags', type: { type: 'map', values: { type: 'array', items: 'string' } } },
      ],
    };
    expect(canonicalForm(schema)).toBe(
      '{"name":"r","type":"record","fields":[{"name":"at","type":"long"},{"name":"amount","type":"bytes"},' +
        '{"name":"tags","type":{"type":"map","values":{"type":"array","items":"string"}}}]}',
    );
  });

  it('ORDER, INTEGERS, WHITESPACE and STRINGS', () => {
    expect(canonicalFormOfText('{ "size" : "016", "type" : "fixed", "name" : "f" }')).toBe('{"name":"f","type":"fixed","size":16}');
    expect(canonicalFormOfText('{"symbols":["\\u00e9t\\u00e9"],"name":"s","type":"enum"}')).toBe('{"name":"s","type":"enum","symbols":["été"]}');
  });

  it('names what is wrong in an invalid schema', () => {
    expect(() => canonicalForm({ type: 'record', name: 'r', fields: [{ name: 'x', type: 'Missing' }] })).toThrow(/\$\.fields\[0\]\.type.*"Missing"/);
    expect(() => canonicalForm({ type: 'fixed', name: 'f', size: -1 })).toThrow(/non-negative integer "size"/);
  });
});
