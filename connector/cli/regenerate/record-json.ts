/**
 * Records as text for `regenerate`: printed in Avro's JSON encoding (Avro specification, "JSON
 * Encoding": unions as `{"branch": value}`, bytes as ISO-8859-1 text), which reads back exactly, and
 * compared field by field on their binary encodings, so equal means byte-equal.
 */
import type { Type } from 'avsc';
import { UsageError } from '../../../config/errors.js';
import { PROVENANCE_FIELD_NAME } from '../../pipeline/provenance.js';

export function recordJson(type: Type, record: unknown): string {
  return type.toString(record);
}

/**
 * Reads `--compare` text: the Avro JSON encoding, or plain JSON the schema accepts as it is (records
 * without unions of several non-null branches, longs or bytes). A `raretide_provenance` entry, as in a
 * record copied from a file output, is left out.
 */
export function parseRecordJson(type: Type, text: string, origin: string): unknown {
  let parsed: unknown;
  try {
    parsed = JSON.parse(text);
  } catch (cause) {
    throw new UsageError(`${origin} is not JSON (${(cause as Error).message}); pass the record as printed by regenerate.`, { cause });
  }
  if (parsed !== null && typeof parsed === 'object' && !Array.isArray(parsed)) {
    const { [PROVENANCE_FIELD_NAME]: _provenance, ...fields } = parsed as Record<string, unknown>;
    parsed = fields;
  }
  if (type.isValid(parsed)) return parsed;
  try {
    return type.fromString(JSON.stringify(parsed));
  } catch (cause) {
    throw new UsageError(`${origin} is not a record of schema ${type.name ?? type.typeName} (${(cause as Error).message}); pass it in Avro's JSON encoding, as regenerate prints it.`, { cause });
  }
}

/** The first field whose encodings differ, as `field: A vs B`; undefined when the records are byte-equal. */
export function firstDifference(type: Type, left: unknown, right: unknown, names: readonly [string, string]): string | undefined {
  if (type.toBuffer(left).equals(type.toBuffer(right))) return undefined;
  const fields = (type as Type & { getFields?: () => { name: string; getType(): Type }[] }).getFields?.() ?? [];
  for (const field of fields) {
    const fieldType = field.getType();
    const a = (left as Record<string, unknown>)[field.name];
    const b = (right as Record<string, unknown>)[field.name];
    if (!fieldType.toBuffer(a).equals(fieldType.toBuffer(b))) {
      return `field ${field.name}: ${names[0]} ${fieldType.toString(a)}, ${names[1]} ${fieldType.toString(b)}`;
    }
  }
  return `${names[0]} ${type.toString(left)}, ${names[1]} ${type.toString(right)}`;
}
