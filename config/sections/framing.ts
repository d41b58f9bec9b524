import * as z from 'zod';
import { filePath } from './common.js';

/**
 * How Avro records are laid out in Kafka message values, and where their writer schema comes from.
 * The three layouts are the ones the Avro world uses on topics: bare binary, the Avro specification's
 * single-object encoding, and a schema registry's wire format.
 */
export const framingSchema = z
  .discriminatedUnion('kind', [
    z
      .object({
        /** Bare Avro binary; every value is written with the one schema in `schemaFile`. */
        kind: z.literal('raw').meta({ description: 'Bare Avro binary, one schema for every value.' }),
        /** Path of the writer schema (`.avsc` JSON). */
        schemaFile: filePath().meta({
          description: 'Path of the writer schema (`.avsc` JSON).',
          examples: ['schemas/reading.avsc'],
        }),
      })
      .strict(),
    z
      .object({
        /** Avro single-object encoding: marker `C3 01`, the schema's CRC-64-AVRO fingerprint, the binary value. */
        kind: z.literal('single-object').meta({
          description: 'Avro single-object encoding: marker C3 01, CRC-64-AVRO fingerprint, binary value.',
        }),
        /** Writer schemas the fingerprints may refer to; each value is decoded with the one whose fingerprint it carries. */
        schemaFiles: z
          .array(filePath())
          .min(1, { error: 'expected a list of at least one schema file' })
          .meta({
            description: 'Writer schemas the fingerprints may refer to (`.avsc` JSON files).',
            examples: [['schemas/reading-v1.avsc', 'schemas/reading-v2.avsc']],
          }),
      })
      .strict(),
    z
      .object({
        /** Schema registry wire format: magic byte 0, a 4-byte big-endian schema id, the binary value. */
        kind: z.literal('registry').meta({
          description: 'Schema registry wire format: magic byte 0, 4-byte schema id, binary value.',
        }),
        /** Base URL of the schema registry that resolves schema ids. */
        url: z
          .url({ protocol: /^https?$/, error: 'expected an http(s) URL' })
          .meta({ description: 'Base URL of the schema registry that resolves schema ids.', examples: ['http://127.0.0.1:8081'] }),
        /**
         * For writing (a sink's framing): the id under which the output schema is registered. raretide
         * registers no schemas; it checks at start-up that this id holds the schema it writes with.
         */
        outputSchemaId: z
          .int()
          .min(0)
          .optional()
          .meta({ description: 'For writing: the registry id of the output schema (checked at start-up).', examples: [7] }),
      })
      .strict(),
  ])
  .meta({ description: 'How values are framed: `raw`, `single-object` or `registry`.' });

export type FramingConfig = z.infer<typeof framingSchema>;
