import type { KnownSchema } from './known-schema.js';
import type { Result } from './problems.js';

export type FramingKind = 'raw' | 'single-object' | 'registry';

/** A payload with its framing taken off: the writer schema and where the Avro body starts. */
export interface Unframed {
  readonly writer: KnownSchema;
  readonly body: Buffer;
  /** Offset of `body` in the payload, so problems found in the body report payload offsets. */
  readonly bodyOffset: number;
}

/**
 * How Avro bytes sit in a Kafka message: bare (`raw`), behind a schema fingerprint
 * (`single-object`), or behind a schema registry id (`registry`). Input and output framings are
 * chosen separately.
 */
export interface Framing {
  readonly kind: FramingKind;
  /** Finds the writer schema of `payload`. Never throws: a bad payload gives a problem. Answers
   *  synchronously when it can (no registry fetch), so the common path costs no extra promise. */
  unframe(payload: Buffer): Result<Unframed> | Promise<Result<Unframed>>;
  /** Encodes `record` with the framing's output schema behind the framing's header. Throws
   *  `avro.invalid-record` when the record does not fit that schema. */
  frame(record: unknown): Buffer;
}
