import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { knownSchema } from '../../../connector/avro/known-schema.js';
import { PayloadDecoder } from '../../../connector/avro/payload-decoder.js';
import { problemFields, renderProblem, type DecodeProblem, type Result } from '../../../connector/avro/problems.js';
import { RawFraming } from '../../../connector/avro/raw-framing.js';
import { RegistryFraming } from '../../../connector/avro/registry-framing.js';
import { HttpSchemaRegistry } from '../../../connector/avro/schema-registry.js';
import { SingleObjectFraming } from '../../../connector/avro/single-object-framing.js';
import { READING_V1, readingV1, sampleReading } from './support/schemas.js';
import { startTestRegistry, type TestRegistry } from './support/registry-server.js';

let registry: TestRegistry;
beforeAll(async () => {
  registry = await startTestRegistry({ 7: READING_V1 });
});
afterAll(async () => registry.close());

function problemOf<T>(result: Result<T>): DecodeProblem {
  if (result.ok) throw new Error(`expected a problem, got ${JSON.stringify(result.value)}`);
  return result.problem;
}

const framings = {
  raw: () => new RawFraming(readingV1),
  'single-object': () => new SingleObjectFraming([readingV1]),
  registry: () => new RegistryFraming(new HttpSchemaRegistry({ url: registry.url }), { schema: readingV1, schemaId: 7 }),
};

describe.each(Object.entries(framings))('%s framing', (kind, make) => {
  it('round-trips records', async () => {
    const decoder = new PayloadDecoder(make());
    for (let i = 0; i < 20; i++) {
      const record = sampleReading(i);
      const decoded = await decoder.decode(decoder.framing.frame(record));
      expect(decoded.ok && { ...(decoded.value.value as object) }).toEqual(record);
    }
  });

  it('reports a truncated body with its offset', async () => {
    const decoder = new PayloadDecoder(make());
    const framed = decoder.framing.frame(sampleReading(1));
    const problem = problemOf(await decoder.decode(framed.subarray(0, framed.length - 3)));
    expect(problem.code).toBe('truncated');
    expect(problem.offset).toBeGreaterThan(0);
    expect(problem.retriable).toBe(false);
  });

  it('reports trailing bytes as malformed', async () => {
    const decoder = new PayloadDecoder(make());
    const framed = decoder.framing.frame(sampleReading(1));
    const problem = problemOf(await decoder.decode(Buffer.concat([framed, Buffer.from([0])])));
    expect(problem).toMatchObject({ code: 'malformed', offset: framed.length });
  });

  it(`reports a NaN level by field path (${kind})`, async () => {
    const decoder = new PayloadDecoder(make());
    const problem = problemOf(await decoder.decode(decoder.framing.frame({ ...sampleReading(2), samples: [1, Number.NEGATIVE_INFINITY] })));
    expect(problem).toMatchObject({ code: 'non-finite-double', path: 'samples[1]' });
    expect(renderProblem(problem)).toMatch(/^non-finite-double in field samples\[1\].*: field samples\[1\] is -Infinity/);
  });

  it('refuses a record that does not fit the output schema, naming the field', () => {
    expect(() => make().frame({ ...sampleReading(1), count: 'many' })).toThrow(/count = "many"/);
  });
});

// Single-object header: Avro specification, "Single-object encoding". Registry header (byte 0, 4-byte
// big-endian id) and `GET /schemas/ids/{id}`: common practice of schema registries, not an open standard.
describe('framing headers', () => {
  it('single-object: wrong marker, short header, unknown fingerprint', async () => {
    const framing = new SingleObjectFraming([readingV1]);
    expect(problemOf(await framing.unframe(Buffer.from([0xc3, 0x02])))).toMatchObject({ code: 'bad-magic', offset: 1 });
    expect(problemOf(await framing.unframe(Buffer.from([0xc3, 0x01, 1, 2])))).toMatchObject({ code: 'truncated', offset: 4 });
    const other = knownSchema('string', 'other.avsc');
    const foreign = new SingleObjectFraming([other]).frame('x');
    expect(problemOf(await framing.unframe(foreign))).toMatchObject({ code: 'unknown-fingerprint', offset: 2, schema: other.fingerprint.hex });
  });

  it('registry: wrong magic, short header, unknown and negative ids', async () => {
    const framing = new RegistryFraming(new HttpSchemaRegistry({ url: registry.url }));
    expect(problemOf(await framing.unframe(Buffer.from([])))).toMatchObject({ code: 'truncated', offset: 0 });
    expect(problemOf(await framing.unframe(Buffer.from([1, 0, 0, 0, 7])))).toMatchObject({ code: 'bad-magic', offset: 0 });
    expect(problemOf(await framing.unframe(Buffer.from([0, 0, 0])))).toMatchObject({ code: 'truncated', offset: 3 });
    const unknown = problemOf(await framing.unframe(Buffer.from([0, 0, 0, 0, 99, 2])));
    expect(unknown).toMatchObject({ code: 'unknown-schema-id', offset: 1, retriable: false });
    expect(problemOf(await framing.unframe(Buffer.from([0, 0xff, 0, 0, 0])))).toMatchObject({ code: 'unknown-schema-id' });
  });

  it('registry: output needs a configured schema id', () => {
    const framing = new RegistryFraming(new HttpSchemaRegistry({ url: registry.url }));
    expect(() => framing.frame(sampleReading(0))).toThrow(/schema id/);
  });

  it('registry: checkOutput spots an id that holds another schema', async () => {
    registry.schemas.set(8, 'string');
    const good = new RegistryFraming(new HttpSchemaRegistry({ url: registry.url }), { schema: readingV1, schemaId: 7 });
    expect((await good.checkOutput()).ok).toBe(true);
    const wrong = new RegistryFraming(new HttpSchemaRegistry({ url: registry.url }), { schema: readingV1, schemaId: 8 });
    expect(problemOf(await wrong.checkOutput()).code).toBe('schema-mismatch');
  });
});

// Rules the refusals follow: Avro specification, "Binary Encoding" (zig-zag varints of at most 64 bits,
// int is 32-bit, boolean is one byte 0 or 1, enum and union indexes, array blocks).
describe('bounded decoding', () => {
  const nulls = knownSchema({ type: 'array', items: 'null' }, 'nulls.avsc');
  const ints = knownSchema({ type: 'array', items: 'int' }, 'ints.avsc');

  it('refuses an absurd item count before allocating', async () => {
    // count 2^40 of zero-byte items, then a terminating 0: avsc would try `new Array(2^40)`.
    const count = Buffer.from([0x80, 0x80, 0x80, 0x80, 0x80, 0x40]);
    const problem = problemOf(await new PayloadDecoder(new RawFraming(nulls)).decode(Buffer.concat([count, Buffer.from([0])])));
    expect(problem).toMatchObject({ code: 'malformed', offset: 0 });
    const short = problemOf(await new PayloadDecoder(new RawFraming(ints)).decode(Buffer.concat([count, Buffer.from([0])])));
    expect(short).toMatchObject({ code: 'truncated', offset: 0 });
  });

  it('refuses overlong varints, bad enum and union indexes, and unsafe longs', async () => {
    const decode = (schema: unknown, bytes: number[]) => new PayloadDecoder(new RawFraming(knownSchema(schema, 's'))).decode(Buffer.from(bytes));
    expect(problemOf(await decode('long', [0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0x7f])).code).toBe('malformed');
    expect(problemOf(await decode('long', [0xfe, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0x7f])).reason).toMatch(/2\^53/);
    expect(problemOf(await decode({ type: 'enum', name: 'E', symbols: ['A'] }, [2])).reason).toMatch(/enum index 1/);
    expect(problemOf(await decode(['null', 'int'], [4])).reason).toMatch(/union branch 2/);
    expect(problemOf(await decode('int', [0x80, 0x80, 0x80, 0x80, 0x10])).reason).toMatch(/outside 32 bits/);
    expect(problemOf(await decode('boolean', [2])).reason).toMatch(/boolean byte is 2/);
    // 2^52 zig-zags to 2^53 raw: still exact, so it decodes.
    const big = await decode('long', [...avroLong(2 ** 52)]);
    expect(big.ok && big.value.value).toBe(2 ** 52);
  });
});

function avroLong(value: number): Buffer {
  return knownSchema('long', 'long').type.toBuffer(value);
}

describe('problem rendering', () => {
  it('renders one line and flat header fields', async () => {
    const problem = problemOf(await new SingleObjectFraming([readingV1]).unframe(Buffer.from([0x4f, 0x62])));
    expect(renderProblem(problem)).toBe('bad-magic at byte 0: expected single-object marker C3 01, found byte 4F at position 0');
    expect(problemFields(problem)).toEqual({
      code: 'bad-magic',
      reason: 'expected single-object marker C3 01, found byte 4F at position 0',
      retriable: 'false',
      offset: '0',
    });
  });
});
