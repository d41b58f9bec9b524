import { UsageError } from '../../config/errors.js';
import type { Framing, Unframed } from './framing.js';
import type { KnownSchema } from './known-schema.js';
import { fail, ok, type Result } from './problems.js';
import { encodeRecord } from './record-encoding.js';

/** Avro specification, "Single-object encoding": marker C3 01, then the 8-byte fingerprint. */
export const SINGLE_OBJECT_MARKER: Buffer = Buffer.from([0xc3, 0x01]);
const HEADER_BYTES = 10;

/**
 * Avro single-object encoding: C3 01, the schema's CRC-64-AVRO fingerprint (little-endian), the
 * body. The writer schema is looked up by fingerprint among the configured schemas, so a topic may
 * carry several schema versions at once.
 */
export class SingleObjectFraming implements Framing {
  readonly kind = 'single-object';
  /** Keyed by the fingerprint read as a little-endian integer: cheaper per payload than hex text. */
  private readonly byFingerprint: ReadonlyMap<bigint, KnownSchema>;
  private readonly output: KnownSchema;

  /** @param output the schema `frame` writes with; the first of `schemas` when not given. */
  constructor(schemas: readonly KnownSchema[], output?: KnownSchema) {
    const first = output ?? schemas[0];
    if (first === undefined) {
      throw new UsageError('Single-object framing needs at least one Avro schema; list the producer schemas in the config.');
    }
    this.output = first;
    this.byFingerprint = new Map([...schemas, first].map((schema) => [schema.fingerprint.bytes.readBigUInt64LE(0), schema]));
  }

  unframe(payload: Buffer): Result<Unframed> {
    for (let i = 0; i < SINGLE_OBJECT_MARKER.length; i++) {
      if (i >= payload.length) return fail('truncated', 'payload ends inside the single-object marker C3 01', { offset: i });
      if (payload[i] !== SINGLE_OBJECT_MARKER[i]) {
        return fail('bad-magic', `expected single-object marker C3 01, found byte ${hex(payload[i]!)} at position ${i}`, { offset: i });
      }
    }
    if (payload.length < HEADER_BYTES) {
      return fail('truncated', `payload ends inside the 8-byte schema fingerprint (${payload.length} of ${HEADER_BYTES} header bytes)`, {
        offset: payload.length,
      });
    }
    const writer = this.byFingerprint.get(payload.readBigUInt64LE(2));
    if (writer === undefined) {
      const fingerprint = payload.subarray(2, HEADER_BYTES).toString('hex');
      return fail(
        'unknown-fingerprint',
        `schema fingerprint ${fingerprint} matches none of the configured schemas (${this.configuredSources()}); add the producer's schema to the list`,
        { offset: 2, schema: fingerprint },
      );
    }
    return ok({ writer, body: payload.subarray(HEADER_BYTES), bodyOffset: HEADER_BYTES });
  }

  private configuredSources(): string {
    const sources = [...this.byFingerprint.values()].map((schema) => schema.source);
    return sources.length > 4 ? `${sources.slice(0, 4).join(', ')} and ${sources.length - 4} more` : sources.join(', ');
  }

  frame(record: unknown): Buffer {
    return Buffer.concat([SINGLE_OBJECT_MARKER, this.output.fingerprint.bytes, encodeRecord(this.output, record)]);
  }
}

function hex(byte: number): string {
  return byte.toString(16).padStart(2, '0').toUpperCase();
}
