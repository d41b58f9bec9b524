import { scanValue, type ScanLimits } from './bounded-scan.js';
import type { Framing, Unframed } from './framing.js';
import type { KnownSchema } from './known-schema.js';
import { findNonFinite } from './non-finite.js';
import { fail, ok, type Result } from './problems.js';
import { ReaderResolution } from './resolution.js';

export interface DecodedRecord {
  /** The record, in the shape of the reader schema (or of the writer schema when no reader is set). */
  readonly value: unknown;
  readonly writer: KnownSchema;
}

export interface PayloadDecoderOptions {
  /** The schema records are read as; without one, records keep their writer's shape. */
  readonly reader?: KnownSchema;
  readonly limits?: ScanLimits;
}

/**
 * Payload bytes → record: unframe, bounds-check the body against the writer schema, resolve it into
 * the reader schema, refuse non-finite doubles. Never throws for a bad payload; every failure is a
 * problem with the payload offset where it was found.
 */
export class PayloadDecoder {
  private readonly resolution: ReaderResolution | undefined;
  private readonly limits: ScanLimits;

  constructor(
    readonly framing: Framing,
    options: PayloadDecoderOptions = {},
  ) {
    this.resolution = options.reader === undefined ? undefined : new ReaderResolution(options.reader);
    this.limits = options.limits ?? {};
  }

  /**
   * A plain result when the framing answers at once (raw and single-object framing, a registry schema
   * already cached), a promise only when it must look a schema up: the worker decodes every record of
   * a batch, and an async call per record was a measurable share of its time.
   */
  decode(payload: Uint8Array): Result<DecodedRecord> | Promise<Result<DecodedRecord>> {
    const bytes = Buffer.isBuffer(payload) ? payload : Buffer.from(payload.buffer, payload.byteOffset, payload.byteLength);
    const pending = this.framing.unframe(bytes);
    return pending instanceof Promise ? pending.then((unframed) => this.decodeBody(bytes, unframed)) : this.decodeBody(bytes, pending);
  }

  private decodeBody(bytes: Buffer, unframed: Result<Unframed>): Result<DecodedRecord> {
    if (!unframed.ok) return unframed;
    const { writer, bodyOffset } = unframed.value;
    const schema = writer.fingerprint.hex;

    const scanned = scanValue(writer.type, bytes, bodyOffset, this.limits);
    if (!scanned.ok) return fail(scanned.problem.code, scanned.problem.reason, { offset: scanned.problem.offset, schema });
    if (scanned.value !== bytes.length) {
      return fail('malformed', `${bytes.length - scanned.value} bytes follow the end of the record; is the writer schema right?`, {
        offset: scanned.value,
        schema,
      });
    }

    const resolver = this.resolution?.resolverFor(writer) ?? ok(undefined);
    if (!resolver.ok) return resolver;
    const readerType = this.resolution?.reader.type ?? writer.type;
    let value: unknown;
    try {
      value = readerType.decode(bytes, bodyOffset, resolver.value).value;
    } catch (cause) {
      // The scan accepted the bytes, so this is a value avsc refuses (e.g. a logical type's check).
      return fail('malformed', `avsc could not decode the record: ${(cause as Error).message}`, { offset: bodyOffset, schema });
    }

    const nonFinite = findNonFinite(value);
    if (nonFinite !== undefined) {
      return fail('non-finite-double', `field ${nonFinite.path} is ${nonFinite.value}; only finite numbers can be learned`, {
        path: nonFinite.path,
        schema,
      });
    }
    return ok({ value, writer });
  }
}
