import avro from 'avsc';

/** An Avro schema in its JSON form (an object, an array for a union, or a type name). */
export type AvroSchemaJson = string | Record<string, unknown> | readonly unknown[];

/** A record value as avsc reads it (unions of null and one type are unwrapped, avsc's default). */
export type AvroRecord = Record<string, unknown>;

/**
 * A logical type that keeps the underlying representation (a long stays a number, a uuid a string).
 * Registering it for every logical type named in the schema lets the codec see which fields carry one
 * — avsc drops unregistered logicalType attributes — without changing any value.
 */
class TransparentLogicalType extends avro.types.LogicalType {
  protected override _fromValue(value: unknown): unknown {
    return value;
  }

  protected override _toValue(value: unknown): unknown {
    return value;
  }

  protected override _resolve(): unknown {
    return undefined;
  }
}

function collectLogicalTypeNames(schema: unknown, names: Set<string>): void {
  if (Array.isArray(schema)) {
    for (const branch of schema) collectLogicalTypeNames(branch, names);
  } else if (schema !== null && typeof schema === 'object') {
    for (const [key, value] of Object.entries(schema)) {
      if (key === 'logicalType' && typeof value === 'string') names.add(value);
      else collectLogicalTypeNames(value, names);
    }
  }
}

/** Parses a schema into an avsc Type whose logical types are visible (typeName `logical:<name>`). */
export function parseSchemaWithLogicalTypes(schema: AvroSchemaJson): avro.Type {
  const names = new Set<string>();
  collectLogicalTypeNames(schema, names);
  const logicalTypes = Object.fromEntries([...names].map((name) => [name, TransparentLogicalType]));
  return avro.Type.forSchema(schema as Parameters<typeof avro.Type.forSchema>[0], { logicalTypes });
}

export function isUnion(type: avro.Type): type is avro.types.UnwrappedUnionType | avro.types.WrappedUnionType {
  return type.typeName === 'union:unwrapped' || type.typeName === 'union:wrapped';
}

export function isRecord(type: avro.Type): type is avro.types.RecordType {
  return type.typeName === 'record' || type.typeName === 'error';
}

/** The logical type's name (e.g. `timestamp-millis`), or undefined for a plain type. */
export function logicalTypeName(type: avro.Type): string | undefined {
  return type.typeName.startsWith('logical:') ? type.typeName.slice('logical:'.length) : undefined;
}

/** A short human description of a type for the field table, e.g. `long (timestamp-millis)`, `enum Weather`. */
export function describeAvroType(type: avro.Type): string {
  const logical = logicalTypeName(type);
  if (logical !== undefined) {
    return `${describeAvroType((type as avro.types.LogicalType).underlyingType)} (${logical})`;
  }
  if (isUnion(type)) return `[${type.types.map(describeAvroType).join(', ')}]`;
  switch (type.typeName) {
    case 'record':
    case 'error':
    case 'enum':
    case 'fixed':
      return `${type.typeName} ${type.name ?? ''}`.trim();
    case 'array':
      return `array<${describeAvroType((type as avro.types.ArrayType).itemsType)}>`;
    case 'map':
      return `map<${describeAvroType((type as avro.types.MapType).valuesType as avro.Type)}>`;
    default:
      return type.typeName;
  }
}
