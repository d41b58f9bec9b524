import { describe, expect, it } from 'vitest';
import { knownSchema } from '../../../connector/avro/known-schema.js';
import { PayloadDecoder } from '../../../connector/avro/payload-decoder.js';
import { ReaderResolution } from '../../../connector/avro/resolution.js';
import { SingleObjectFraming } from '../../../connector/avro/single-object-framing.js';
import { READING_V1, READING_V2_WRITER, readingReader, readingV1, readingV2Writer, sampleReading } from './support/schemas.js';

// Resolution rules: Avro specification, "Schema Resolution" (fields matched by name, writer-only
// fields ignored, reader-only fields take their default, int promotable to long, float, double).
describe('writer → reader schema resolution', () => {
  const input = new SingleObjectFraming([readingV1, readingV2Writer]);
  const decoder = new PayloadDecoder(input, { reader: readingReader });

  it('reads an evolved producer: extra writer field dropped, new reader field defaulted, int promoted to long', async () => {
    const record = { ...sampleReading(3), count: 2_000_000_000, sensor: 'float-b' };
    const decoded = await decoder.decode(new SingleObjectFraming([readingV2Writer]).frame(record));
    expect(decoded.ok).toBe(true);
    if (!decoded.ok) return;
    const { sensor: _dropped, ...expected } = record;
    expect({ ...(decoded.value.value as object) }).toEqual({ ...expected, region: 'unknown' });
    expect(decoded.value.writer.source).toBe('reading-v2.avsc');
    expect(readingReader.type.isValid(decoded.value.value)).toBe(true);
  });

  it('reads the old producer into the same reader shape', async () => {
    const decoded = await decoder.decode(new SingleObjectFraming([readingV1]).frame(sampleReading(4)));
    expect(decoded.ok && (decoded.value.value as { region: string }).region).toBe('unknown');
  });

  it('promotes int to double and float to double', async () => {
    const writer = knownSchema({ type: 'record', name: 'P', fields: [{ name: 'a', type: 'int' }, { name: 'b', type: 'float' }] }, 'w');
    const reader = knownSchema({ type: 'record', name: 'P', fields: [{ name: 'a', type: 'double' }, { name: 'b', type: 'double' }] }, 'r');
    const decoded = await new PayloadDecoder(new SingleObjectFraming([writer]), { reader }).decode(
      new SingleObjectFraming([writer]).frame({ a: 7, b: 0.5 }),
    );
    expect(decoded.ok && { ...(decoded.value.value as object) }).toEqual({ a: 7, b: 0.5 });
  });

  it('reports schema-mismatch when a new reader field has no default', async () => {
    const strict = knownSchema({ ...READING_V1, fields: [...READING_V1.fields, { name: 'depth', type: 'double' }] }, 'strict.avsc');
    const result = await new PayloadDecoder(input, { reader: strict }).decode(input.frame(sampleReading(1)));
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.problem.code).toBe('schema-mismatch');
    expect(result.problem.reason).toMatch(/reading-v1\.avsc cannot be read as reader schema strict\.avsc/);
    expect(result.problem.schema).toBe(readingV1.fingerprint.hex);
  });

  it('builds one resolver per writer schema and none for the reader schema itself', () => {
    const resolution = new ReaderResolution(knownSchema(READING_V1, 'reader-v1'));
    const first = resolution.resolverFor(readingV2Writer);
    expect(first.ok && first.value).toBeTruthy();
    expect(resolution.resolverFor(knownSchema(READING_V2_WRITER, 'again'))).toBe(first);
    expect(resolution.resolverFor(readingV1)).toEqual({ ok: true, value: undefined });
  });
});
