import { knownSchema, type KnownSchema } from '../../../../connector/avro/known-schema.js';

/** Schemas of an invented scenario (tide-gauge readings) shared by the Avro tests. */
export const READING_V1 = {
  type: 'record',
  name: 'Reading',
  namespace: 'test.tide',
  fields: [
    { name: 'station', type: 'string' },
    { name: 'count', type: 'int' },
    { name: 'level', type: 'double' },
    { name: 'state', type: { type: 'enum', name: 'State', symbols: ['LOW', 'RISING', 'HIGH', 'FALLING'] } },
    { name: 'note', type: ['null', 'string'], default: null },
    { name: 'samples', type: { type: 'array', items: 'float' } },
    { name: 'flags', type: { type: 'map', values: 'boolean' } },
  ],
} as const;

/** v2 as the producer evolved it: one field more (`sensor`). */
export const READING_V2_WRITER = { ...READING_V1, fields: [...READING_V1.fields, { name: 'sensor', type: 'string' }] };

/** The reader as raretide was configured later: `count` widened to long, a new defaulted `region`. */
export const READING_READER = {
  ...READING_V1,
  fields: [
    ...READING_V1.fields.map((field) => (field.name === 'count' ? { name: 'count', type: 'long' } : field)),
    { name: 'region', type: 'string', default: 'unknown' },
  ],
};

export const readingV1: KnownSchema = knownSchema(READING_V1, 'reading-v1.avsc');
export const readingV2Writer: KnownSchema = knownSchema(READING_V2_WRITER, 'reading-v2.avsc');
export const readingReader: KnownSchema = knownSchema(READING_READER, 'reading-reader.avsc');

export function sampleReading(index: number): Record<string, unknown> {
  return {
    station: `gauge-${index % 7}`,
    count: index,
    level: 1.5 + index / 8,
    state: ['LOW', 'RISING', 'HIGH', 'FALLING'][index % 4],
    note: index % 3 === 0 ? null : `n${index}`,
    samples: [0.5, index % 5, -2.25],
    flags: { calibrated: index % 2 === 0 },
  };
}
