/**
 * Provenance inside Avro file output: the optional field `raretide_provenance` appended to the record
 * schema (provenance.ts defines it). Avro encodes a record as its fields' encodings one after another
 * (Avro specification, "Binary Encoding", records), so a record of the extended schema is the record's
 * own bytes followed by the field's: a union index (0 = null for originals, 1 for a synthetic tag) and
 * the tag. The sink appends those bytes to each payload and never decodes the record.
 */
import { UsageError } from '../../config/errors.js';
import { knownSchema, parseAvroType, type KnownSchema } from '../avro/known-schema.js';
import { PROVENANCE_FIELD, PROVENANCE_FIELD_NAME, toProvenanceRecord, type ProvenanceTag } from '../pipeline/provenance.js';

const PROVENANCE_UNION = parseAvroType(PROVENANCE_FIELD.type);
/** The field's value for an original: union branch 0, null, which encodes as no bytes after the index. */
export const ORIGINAL_FIELD_BYTES: Buffer = Buffer.from([0]);

/** `schema` (an Avro record schema) with the provenance field appended. */
export function withProvenanceField(schema: KnownSchema): KnownSchema {
  const json = schema.json as { type?: unknown; fields?: readonly { name?: unknown }[] };
  if (typeof json !== 'object' || json === null || json.type !== 'record' || !Array.isArray(json.fields)) {
    throw new UsageError(`Schema ${schema.source} is not an Avro record schema, so no provenance field can be added; set sink.provenance to sidecar.`);
  }
  if (json.fields.some((field) => field.name === PROVENANCE_FIELD_NAME)) {
    throw new UsageError(
      `Schema ${schema.source} already has a field ${PROVENANCE_FIELD_NAME}; raretide adds that field itself. Set sink.provenance to sidecar, or rename the field.`,
    );
  }
  return knownSchema({ ...json, fields: [...json.fields, PROVENANCE_FIELD] }, `${schema.source} + ${PROVENANCE_FIELD_NAME}`);
}

/** The encoded value of the provenance field for `tag`. */
export function provenanceFieldBytes(tag: ProvenanceTag): Buffer {
  return tag.kind === 'original' ? ORIGINAL_FIELD_BYTES : PROVENANCE_UNION.toBuffer(toProvenanceRecord(tag));
}
