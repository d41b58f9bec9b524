import fc from 'fast-check';

/**
 * fast-check arbitraries for random Avro record schemas (nested and nullable records, enums, arrays,
 * maps, logical types, bytes, fixed, strings, unions) and for records that conform to them.
 */
export type SchemaNode =
  | { readonly t: 'primitive'; readonly name: 'null' | 'boolean' | 'int' | 'long' | 'float' | 'double' | 'string' | 'bytes' }
  | { readonly t: 'enum'; readonly symbols: readonly string[] }
  | { readonly t: 'fixed'; readonly size: number }
  | { readonly t: 'logical'; readonly logical: LogicalKind }
  | { readonly t: 'array'; readonly items: SchemaNode }
  | { readonly t: 'map'; readonly values: SchemaNode }
  | { readonly t: 'record'; readonly fields: readonly { readonly name: string; readonly type: SchemaNode }[] }
  | { readonly t: 'nullable'; readonly value: SchemaNode; readonly nullFirst: boolean }
  /** A union of types JavaScript tells apart, so avsc leaves its values unwrapped. */
  | { readonly t: 'union'; readonly branches: readonly ('null' | 'boolean' | 'int' | 'string')[] }
  /** ["int", "double"]: both numbers, so avsc wraps the values ({"int": 3}). */
  | { readonly t: 'wrapped' };

type LogicalKind = 'timestamp-millis' | 'timestamp-micros' | 'date' | 'time-millis' | 'uuid' | 'decimal-bytes' | 'decimal-fixed';

const primitive = fc.constantFrom('boolean', 'int', 'long', 'float', 'double', 'string', 'bytes', 'null').map(
  (name) => ({ t: 'primitive', name }) as const,
);
const enumNode = fc
  .uniqueArray(fc.constantFrom('RED', 'GREEN', 'BLUE', 'AMBER', 'GREY'), { minLength: 1, maxLength: 5 })
  .map((symbols) => ({ t: 'enum', symbols }) as const);
const fixedNode = fc.integer({ min: 1, max: 8 }).map((size) => ({ t: 'fixed', size }) as const);
const logicalNode = fc
  .constantFrom<LogicalKind>('timestamp-millis', 'timestamp-micros', 'date', 'time-millis', 'uuid', 'decimal-bytes', 'decimal-fixed')
  .map((logical) => ({ t: 'logical', logical }) as const);
const unionNode = fc
  .uniqueArray(fc.constantFrom('null', 'boolean', 'int', 'string'), { minLength: 2, maxLength: 3 })
  .map((branches) => ({ t: 'union', branches }) as const);
const leaf: fc.Arbitrary<SchemaNode> = fc.oneof(
  { arbitrary: primitive, weight: 6 },
  { arbitrary: enumNode, weight: 2 },
  { arbitrary: fixedNode, weight: 1 },
  { arbitrary: logicalNode, weight: 2 },
  { arbitrary: unionNode, weight: 1 },
  { arbitrary: fc.constant({ t: 'wrapped' } as const), weight: 1 },
);

/** Field names; some look like identifiers so the name heuristic is exercised. */
function fieldNames(count: number): fc.Arbitrary<string[]> {
  return fc.constantFrom('f0', 'id', 'orderId', 'trace_uuid').map((first) => Array.from({ length: count }, (_, i) => (i === 0 ? first : `f${i}`)));
}

function recordOf(node: fc.Arbitrary<SchemaNode>, maxFields: number): fc.Arbitrary<SchemaNode> {
  return fc
    .integer({ min: 1, max: maxFields })
    .chain((count) => fc.tuple(fieldNames(count), fc.array(node, { minLength: count, maxLength: count })))
    .map(([names, types]) => ({ t: 'record', fields: names.map((name, i) => ({ name, type: types[i]! })) }) as const);
}

function schemaNode(depth: number): fc.Arbitrary<SchemaNode> {
  if (depth === 0) return leaf;
  const inner = schemaNode(depth - 1);
  const nullableValue = inner.filter((node) => node.t !== 'union' && node.t !== 'nullable' && node.t !== 'wrapped' && !(node.t === 'primitive' && node.name === 'null'));
  return fc.oneof(
    { arbitrary: leaf, weight: 8 },
    { arbitrary: inner.map((items) => ({ t: 'array', items }) as const), weight: 1 },
    { arbitrary: inner.map((values) => ({ t: 'map', values }) as const), weight: 1 },
    { arbitrary: recordOf(inner, 3), weight: 2 },
    { arbitrary: fc.tuple(nullableValue, fc.boolean()).map(([value, nullFirst]) => ({ t: 'nullable', value, nullFirst }) as const), weight: 4 },
  );
}

/** A random top-level record schema. */
export const recordSchemaNode: fc.Arbitrary<SchemaNode> = recordOf(schemaNode(2), 7);

/** The Avro JSON schema of a node; named types get unique names in walk order. */
export function toAvroSchema(root: SchemaNode): unknown {
  let counter = 0;
  const name = (prefix: string): string => `${prefix}${counter++}`;
  const convert = (node: SchemaNode): unknown => {
    switch (node.t) {
      case 'primitive':
        return node.name;
      case 'enum':
        return { type: 'enum', name: name('Enum'), symbols: node.symbols };
      case 'fixed':
        return { type: 'fixed', name: name('Fixed'), size: node.size };
      case 'logical':
        switch (node.logical) {
          case 'timestamp-millis':
          case 'timestamp-micros':
            return { type: 'long', logicalType: node.logical };
          case 'date':
          case 'time-millis':
            return { type: 'int', logicalType: node.logical };
          case 'uuid':
            return { type: 'string', logicalType: 'uuid' };
          case 'decimal-bytes':
            return { type: 'bytes', logicalType: 'decimal', precision: 9, scale: 2 };
          case 'decimal-fixed':
            return { type: 'fixed', name: name('Decimal'), size: 8, logicalType: 'decimal', precision: 12, scale: 3 };
        }
        break;
      case 'array':
        return { type: 'array', items: convert(node.items) };
      case 'map':
        return { type: 'map', values: convert(node.values) };
      case 'record':
        return { type: 'record', name: name('Record'), fields: node.fields.map((field) => ({ name: field.name, type: convert(field.type) })) };
      case 'nullable':
        return node.nullFirst ? ['null', convert(node.value)] : [convert(node.value), 'null'];
      case 'union':
        return [...node.branches];
      case 'wrapped':
        return ['int', 'double'];
    }
  };
  return convert(root);
}

const bytes = (minLength: number, maxLength: number): fc.Arbitrary<Buffer> =>
  fc.uint8Array({ minLength, maxLength }).map((array) => Buffer.from(array));
/** Numbers drawn from a small pool repeat, so ties and low-cardinality fields occur. */
const finiteDouble = fc.oneof(fc.double({ noNaN: true, noDefaultInfinity: true }), fc.constantFrom(0, -0, 1.5, -2.25, 1e-300, 7));
const int32 = fc.oneof(fc.integer(), fc.constantFrom(0, 1, 2, -1));
const safeLong = fc.oneof(fc.integer({ min: -(2 ** 52), max: 2 ** 52 }), fc.constantFrom(0, 3, -7));

/** Records conforming to a node's schema, as avsc represents them. */
export function valueOf(node: SchemaNode): fc.Arbitrary<unknown> {
  switch (node.t) {
    case 'primitive':
      switch (node.name) {
        case 'null':
          return fc.constant(null);
        case 'boolean':
          return fc.boolean();
        case 'int':
          return int32;
        case 'long':
          return safeLong;
        case 'float':
          return fc.oneof(fc.float({ noNaN: true, noDefaultInfinity: true }), fc.constantFrom(0, 0.5, Math.fround(0.1)));
        case 'double':
          return fc.oneof({ arbitrary: finiteDouble, weight: 9 }, { arbitrary: fc.constantFrom(Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY), weight: 1 });
        case 'string':
          return fc.oneof(fc.constantFrom('alpha', 'beta', 'gamma'), fc.string({ maxLength: 12 }));
        case 'bytes':
          return bytes(0, 8);
      }
      break;
    case 'enum':
      return fc.constantFrom(...node.symbols);
    case 'fixed':
      return bytes(node.size, node.size);
    case 'logical':
      switch (node.logical) {
        case 'timestamp-millis':
        case 'timestamp-micros':
          return safeLong;
        case 'date':
        case 'time-millis':
          return int32;
        case 'uuid':
          return fc.uuid();
        case 'decimal-bytes':
          return bytes(1, 4);
        case 'decimal-fixed':
          return bytes(8, 8);
      }
      break;
    case 'array':
      return fc.array(valueOf(node.items), { maxLength: 3 });
    case 'map':
      return fc.dictionary(fc.constantFrom('k1', 'k2', 'k3', ''), valueOf(node.values), { maxKeys: 3 });
    case 'record': {
      const shape: Record<string, fc.Arbitrary<unknown>> = {};
      for (const field of node.fields) shape[field.name] = valueOf(field.type);
      return fc.record(shape);
    }
    case 'nullable':
      return fc.option(valueOf(node.value), { nil: null, freq: 3 });
    case 'union':
      return fc.oneof(...node.branches.map((branch) => valueOf({ t: 'primitive', name: branch })));
    case 'wrapped':
      return fc.oneof(int32.map((int) => ({ int })), finiteDouble.map((double) => ({ double })));
  }
}

/** Policies each field path may take without error, for random overrides. */
export function allowedOverrides(root: SchemaNode): { path: string; policy: 'copy' | 'fresh' | 'null' }[] {
  const options: { path: string; policy: 'copy' | 'fresh' | 'null' }[] = [];
  const visit = (node: SchemaNode, path: string): void => {
    const value = node.t === 'nullable' ? node.value : node;
    const nullable = node.t === 'nullable' || (node.t === 'union' && node.branches.includes('null')) || (node.t === 'primitive' && node.name === 'null');
    options.push({ path, policy: 'copy' });
    if (nullable) options.push({ path, policy: 'null' });
    const freshable =
      (value.t === 'primitive' && ['string', 'int', 'long', 'bytes'].includes(value.name)) ||
      value.t === 'fixed' ||
      (value.t === 'logical' && value.logical === 'uuid');
    if (freshable) options.push({ path, policy: 'fresh' });
    if (value.t === 'record') for (const field of value.fields) visit(field.type, `${path}.${field.name}`);
  };
  if (root.t === 'record') for (const field of root.fields) visit(field.type, field.name);
  return options;
}

/** Top-level fields that can be the label. */
export function labelCandidates(root: SchemaNode): string[] {
  if (root.t !== 'record') return [];
  return root.fields
    .filter((field) => field.type.t === 'enum' || (field.type.t === 'primitive' && ['string', 'boolean', 'int', 'long'].includes(field.type.name)))
    .map((field) => field.name);
}
