import { RaretideError } from '../../config/errors.js';
import type { KnownSchema } from './known-schema.js';

/**
 * Encodes a record with `schema`, checking it first so a bad record is reported by field path
 * instead of avsc's bare "invalid record". Encoding is the output path: a record that does not fit
 * the output schema is a bug upstream (the guard should have caught it), so this throws.
 */
export function encodeRecord(schema: KnownSchema, record: unknown): Buffer {
  const badPaths: string[] = [];
  const valid = schema.type.isValid(record, {
    errorHook: (path: string[], value: unknown) => {
      if (badPaths.length < 3) badPaths.push(`${path.join('.') || '(record)'} = ${describe(value)}`);
    },
  });
  if (!valid) {
    throw new RaretideError(
      'avro.invalid-record',
      `Record does not match output schema ${schema.source}: ${badPaths.join('; ')}. Fix the record or the output schema.`,
    );
  }
  return schema.type.toBuffer(record);
}

function describe(value: unknown): string {
  if (Buffer.isBuffer(value)) return `<${value.length} bytes>`;
  const text = typeof value === 'bigint' ? `${value}n` : JSON.stringify(value) ?? String(value);
  return text.length > 60 ? `${text.slice(0, 57)}...` : text;
}
