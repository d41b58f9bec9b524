import { RaretideError } from '../../config/errors.js';

/**
 * Parsing Canonical Form of an Avro schema, built from the rules of the Avro specification
 * ("Parsing Canonical Form for Schemas": PRIMITIVES, FULLNAMES, STRIP, ORDER, STRINGS, INTEGERS,
 * WHITESPACE). Two schemas with the same canonical form read and write the same bytes, so the form
 * (and its fingerprint) identifies a schema on the wire and in a model artifact.
 */

/** An Avro schema as parsed JSON: a type name, a union array or a schema object. */
export type AvroSchemaJson = unknown;

const PRIMITIVES = new Set(['null', 'boolean', 'int', 'long', 'float', 'double', 'bytes', 'string']);
const NAMED = new Set(['record', 'error', 'enum', 'fixed']);

/** Returns the canonical form of a parsed schema; throws `avro.schema-invalid` naming the bad part. */
export function canonicalForm(schema: AvroSchemaJson): string {
  return build(schema, null, new Set(), '$');
}

/** Returns the canonical form of schema JSON text (the content of an `.avsc` file). */
export function canonicalFormOfText(text: string): string {
  let parsed: unknown;
  try {
    parsed = JSON.parse(text);
  } catch (cause) {
    throw invalid('$', `schema text is not JSON (${(cause as Error).message})`);
  }
  return canonicalForm(parsed);
}

function build(schema: unknown, namespace: string | null, seen: Set<string>, at: string): string {
  if (typeof schema === 'string') return nameReference(schema, namespace, seen, at);
  if (Array.isArray(schema)) {
    return `[${schema.map((branch, i) => build(branch, namespace, seen, `${at}[${i}]`)).join(',')}]`;
  }
  if (schema === null || typeof schema !== 'object') {
    throw invalid(at, `expected a type name, a union array or a schema object, got ${JSON.stringify(schema)}`);
  }
  const object = schema as Record<string, unknown>;
  const type = object.type;
  // `{"type": {...}}` wraps a schema; STRIP drops the wrapper.
  if (typeof type !== 'string') return build(type, namespace, seen, `${at}.type`);
  // PRIMITIVES: `{"type":"int", "logicalType": ...}` becomes "int".
  if (PRIMITIVES.has(type)) return JSON.stringify(type);
  if (type === 'array') return `{"type":"array","items":${build(object.items, namespace, seen, `${at}.items`)}}`;
  if (type === 'map') return `{"type":"map","values":${build(object.values, namespace, seen, `${at}.values`)}}`;
  if (!NAMED.has(type)) return nameReference(type, namespace, seen, at);
  return buildNamed(object, type, namespace, seen, at);
}

function buildNamed(
  object: Record<string, unknown>,
  type: string,
  enclosing: string | null,
  seen: Set<string>,
  at: string,
): string {
  if (typeof object.name !== 'string' || object.name === '') {
    throw invalid(at, `a ${type} needs a "name" string`);
  }
  const ownNamespace = typeof object.namespace === 'string' ? object.namespace : enclosing;
  const fullName = qualify(object.name, ownNamespace);
  // A named type written out once is referred to by its full name afterwards (as a recursive
  // record refers to itself).
  if (seen.has(fullName)) return JSON.stringify(fullName);
  seen.add(fullName);
  const innerNamespace = namespaceOf(fullName);
  // ORDER: name, type, fields, symbols, items, values, size. An `error` parses as a record.
  const head = `{"name":${JSON.stringify(fullName)},"type":${JSON.stringify(type === 'error' ? 'record' : type)}`;
  if (type === 'enum') return `${head},"symbols":${symbols(object.symbols, at)}}`;
  if (type === 'fixed') return `${head},"size":${integerSize(object.size, at)}}`;
  if (!Array.isArray(object.fields)) throw invalid(at, `record "${fullName}" needs a "fields" array`);
  const fields = object.fields.map((field: unknown, i: number) => {
    const fieldAt = `${at}.fields[${i}]`;
    const entry = field as Record<string, unknown> | null;
    if (entry === null || typeof entry !== 'object' || typeof entry.name !== 'string') {
      throw invalid(fieldAt, 'a field needs a "name" string');
    }
    if (!('type' in entry)) throw invalid(fieldAt, `field "${entry.name}" needs a "type"`);
    return `{"name":${JSON.stringify(entry.name)},"type":${build(entry.type, innerNamespace, seen, `${fieldAt}.type`)}}`;
  });
  return `${head},"fields":[${fields.join(',')}]}`;
}

function nameReference(name: string, namespace: string | null, seen: Set<string>, at: string): string {
  if (PRIMITIVES.has(name)) return JSON.stringify(name);
  const fullName = qualify(name, namespace);
  if (seen.has(fullName)) return JSON.stringify(fullName);
  // An unqualified name may also refer to a type in the null namespace.
  if (!name.includes('.') && seen.has(name)) return JSON.stringify(name);
  throw invalid(at, `"${name}" is neither a primitive type nor a named type defined before this point`);
}

/** FULLNAMES: a dotted name is already full; otherwise the namespace in force is prefixed. */
function qualify(name: string, namespace: string | null): string {
  if (name.includes('.') || namespace === null || namespace === '') return name;
  return `${namespace}.${name}`;
}

function namespaceOf(fullName: string): string | null {
  const dot = fullName.lastIndexOf('.');
  return dot < 0 ? null : fullName.slice(0, dot);
}

function symbols(value: unknown, at: string): string {
  if (!Array.isArray(value) || !value.every((symbol) => typeof symbol === 'string')) {
    throw invalid(at, 'an enum needs a "symbols" array of strings');
  }
  // STRINGS: JSON.stringify writes non-ASCII characters as themselves, not as \u escapes.
  return `[${value.map((symbol) => JSON.stringify(symbol)).join(',')}]`;
}

/** INTEGERS: quotes and leading zeros go (`"015"` → 15). */
function integerSize(value: unknown, at: string): string {
  const text = typeof value === 'number' ? String(value) : typeof value === 'string' ? value.trim() : '';
  if (!/^\d+$/.test(text)) throw invalid(at, `a fixed needs a non-negative integer "size", got ${JSON.stringify(value)}`);
  return String(Number.parseInt(text, 10));
}

function invalid(at: string, reason: string): RaretideError {
  return new RaretideError('avro.schema-invalid', `Avro schema at ${at}: ${reason}. Fix the schema (see the Avro specification, "Schema Declaration").`);
}
