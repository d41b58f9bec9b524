import { readFile } from 'node:fs/promises';
import avro from 'avsc';
import type { Type } from 'avsc';
import { RaretideError, UsageError } from '../../config/errors.js';
import { schemaFingerprint, type SchemaFingerprint } from '../../model/avro/fingerprint.js';

/** A schema raretide can read or write with: its avsc type, its JSON, and its fingerprint. */
export interface KnownSchema {
  readonly type: Type;
  /** The schema JSON as given (kept whole, with docs and logical types, for container headers). */
  readonly json: unknown;
  readonly fingerprint: SchemaFingerprint;
  /** Where the schema came from (a file path, `registry id 7`), for messages. */
  readonly source: string;
}

/**
 * The one place avsc types are built, so every part of raretide sees records of the same shape:
 * unions are unwrapped where avsc can tell the branch from the value (`null | T` gives `T` or null),
 * and wrapped as `{branch: value}` otherwise.
 */
export function parseAvroType(json: unknown): Type {
  return avro.Type.forSchema(json as Parameters<typeof avro.Type.forSchema>[0], { wrapUnions: 'auto' });
}

/** Builds a `KnownSchema`; throws `avro.schema-invalid` naming `source` when the schema is not valid. */
export function knownSchema(json: unknown, source: string): KnownSchema {
  try {
    return { type: parseAvroType(json), json, fingerprint: schemaFingerprint(json), source };
  } catch (cause) {
    if (cause instanceof RaretideError) {
      throw new RaretideError(cause.code, `${source}: ${cause.message}`, { cause });
    }
    throw new RaretideError('avro.schema-invalid', `${source}: not a valid Avro schema (${(cause as Error).message}).`, { cause });
  }
}

/** Reads an `.avsc` file; a missing or invalid file is a usage error naming the path. */
export async function loadSchemaFile(path: string): Promise<KnownSchema> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (cause) {
    throw new UsageError(`Cannot read Avro schema file ${path} (${(cause as Error).message}); check the schema path in the config.`, { cause });
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (cause) {
    throw new UsageError(`Avro schema file ${path} is not JSON (${(cause as Error).message}).`, { cause });
  }
  try {
    return knownSchema(json, path);
  } catch (cause) {
    throw new UsageError((cause as Error).message, { cause, code: 'avro.schema-invalid' });
  }
}
