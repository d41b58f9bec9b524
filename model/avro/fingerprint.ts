import { canonicalForm, type AvroSchemaJson } from './canonical-form.js';

/**
 * CRC-64-AVRO, the Rabin fingerprint the Avro specification defines ("Schema Fingerprints") over the
 * UTF-8 bytes of a schema's Parsing Canonical Form. Single-object encoding writes it little-endian
 * after the C3 01 marker; the model artifact records it to tie a model to its schema.
 */

/** The polynomial's seed and the fingerprint of empty input, from the specification. */
const EMPTY = 0xc15d213aa4d7a795n;

const TABLE: BigUint64Array = (() => {
  const table = new BigUint64Array(256);
  for (let i = 0; i < 256; i++) {
    let fp = BigInt(i);
    for (let bit = 0; bit < 8; bit++) fp = (fp >> 1n) ^ (EMPTY & -(fp & 1n));
    table[i] = fp;
  }
  return table;
})();

export interface SchemaFingerprint {
  /** The schema's Parsing Canonical Form, the text the fingerprint is taken over. */
  readonly canonicalForm: string;
  /** Signed 64-bit, as the specification's test vectors print it. */
  readonly value: bigint;
  /** The 8 bytes little-endian, as single-object encoding writes them. */
  readonly bytes: Buffer;
  /** `bytes` as lowercase hex: a stable key for maps and artifacts. */
  readonly hex: string;
}

/** CRC-64-AVRO of raw bytes, unsigned. */
export function crc64Avro(bytes: Uint8Array): bigint {
  let fp = EMPTY;
  for (const byte of bytes) fp = (fp >> 8n) ^ TABLE[Number((fp ^ BigInt(byte)) & 0xffn)]!;
  return fp;
}

/** The fingerprint of a parsed schema (throws `avro.schema-invalid` if it is not a valid schema). */
export function schemaFingerprint(schema: AvroSchemaJson): SchemaFingerprint {
  return fingerprintOfCanonicalForm(canonicalForm(schema));
}

export function fingerprintOfCanonicalForm(canonical: string): SchemaFingerprint {
  const unsigned = crc64Avro(Buffer.from(canonical, 'utf8'));
  const bytes = Buffer.alloc(8);
  bytes.writeBigUInt64LE(unsigned);
  return { canonicalForm: canonical, value: BigInt.asIntN(64, unsigned), bytes, hex: bytes.toString('hex') };
}
