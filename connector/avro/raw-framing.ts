import type { Framing, Unframed } from './framing.js';
import type { KnownSchema } from './known-schema.js';
import { ok, type Result } from './problems.js';
import { encodeRecord } from './record-encoding.js';

/** Bare Avro binary: every payload was written with the one schema given (from an `.avsc` file). */
export class RawFraming implements Framing {
  readonly kind = 'raw';

  constructor(readonly schema: KnownSchema) {}

  unframe(payload: Buffer): Result<Unframed> {
    return ok({ writer: this.schema, body: payload, bodyOffset: 0 });
  }

  frame(record: unknown): Buffer {
    return encodeRecord(this.schema, record);
  }
}
