import * as z from 'zod';

/**
 * Navigation over the config schema's structure, shared by the reference generator, the environment
 * override rule and the error formatter so all three see the same tree. Only the schema kinds the
 * config uses are handled: objects, records, discriminated unions, arrays and scalar leaves, wrapped
 * in optional/default/prefault.
 */

export interface FieldMeta {
  readonly description?: string;
  readonly examples?: readonly unknown[];
  readonly title?: string;
}

/** A schema with its optional/default wrappers peeled off, and what those wrappers said. */
export interface Peeled {
  readonly core: z.ZodType;
  /** True when the value may be left out (optional, or filled by a default). */
  readonly optional: boolean;
  readonly hasDefault: boolean;
  /** The default as written in the schema (for a `prefault`, the input it is parsed from). */
  readonly defaultValue: unknown;
  /** Metadata from every wrapper, the outermost winning. */
  readonly meta: FieldMeta;
}

export function peel(schema: z.ZodType): Peeled {
  let core: z.ZodType = schema;
  let optional = false;
  let hasDefault = false;
  let defaultValue: unknown;
  const metas: FieldMeta[] = [];
  for (;;) {
    const meta = z.globalRegistry.get(core);
    if (meta !== undefined) metas.push(meta as FieldMeta);
    if (core instanceof z.ZodOptional) {
      optional = true;
      core = core.unwrap() as z.ZodType;
    } else if (core instanceof z.ZodDefault || core instanceof z.ZodPrefault) {
      optional = true;
      if (!hasDefault) defaultValue = core._zod.def.defaultValue;
      hasDefault = true;
      core = core.unwrap() as z.ZodType;
    } else {
      break;
    }
  }
  const meta = Object.assign({}, ...metas.reverse()) as FieldMeta;
  return { core, optional, hasDefault, defaultValue, meta };
}

function isMapping(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

/** The options of a discriminated union, keyed by their discriminator value. */
export function unionBranches(union: z.ZodDiscriminatedUnion): Map<string, z.ZodObject> {
  const discriminator = union._zod.def.discriminator;
  const branches = new Map<string, z.ZodObject>();
  for (const option of union.options) {
    if (!(option instanceof z.ZodObject)) continue;
    const literal = peel(option.shape[discriminator] as z.ZodType).core;
    if (literal instanceof z.ZodLiteral) branches.set(String(literal.value), option);
  }
  return branches;
}

/** The branch a value selects, or every branch when its discriminator is missing or unknown. */
function candidateBranches(union: z.ZodDiscriminatedUnion, value: unknown): z.ZodObject[] {
  const branches = unionBranches(union);
  const chosen = isMapping(value) ? branches.get(String(value[union._zod.def.discriminator])) : undefined;
  return chosen === undefined ? [...branches.values()] : [chosen];
}

/**
 * The keys allowed in a mapping at this schema node, given the mapping's current value (which picks a
 * union branch, and supplies the keys of an open record). Undefined when the node is not a mapping.
 */
export function allowedKeys(schema: z.ZodType, value: unknown): string[] | undefined {
  const { core } = peel(schema);
  if (core instanceof z.ZodObject) return Object.keys(core.shape);
  if (core instanceof z.ZodRecord) return isMapping(value) ? Object.keys(value) : [];
  if (core instanceof z.ZodDiscriminatedUnion) {
    return [...new Set(candidateBranches(core, value).flatMap((branch) => Object.keys(branch.shape)))];
  }
  return undefined;
}

/** True for records: mappings whose keys are the user's (classes, field paths, properties). */
export function isOpenMapping(schema: z.ZodType): boolean {
  return peel(schema).core instanceof z.ZodRecord;
}

/** The schema of `key` inside the node, given the node's current value; undefined if there is none. */
export function childSchema(schema: z.ZodType, key: string | number, value: unknown): z.ZodType | undefined {
  const { core } = peel(schema);
  if (core instanceof z.ZodObject) return core.shape[String(key)] as z.ZodType | undefined;
  if (core instanceof z.ZodRecord) return core._zod.def.valueType as z.ZodType;
  if (core instanceof z.ZodArray) return typeof key === 'number' ? (core.element as z.ZodType) : undefined;
  if (core instanceof z.ZodDiscriminatedUnion) {
    const holder = candidateBranches(core, value).find((branch) => String(key) in branch.shape);
    return holder?.shape[String(key)] as z.ZodType | undefined;
  }
  return undefined;
}

/** The value at a path inside a parsed document, or undefined when any step is absent. */
export function valueAt(document: unknown, path: readonly PropertyKey[]): unknown {
  let value = document;
  for (const key of path) {
    if (Array.isArray(value) && typeof key === 'number') value = value[key];
    else if (isMapping(value)) value = value[String(key)];
    else return undefined;
  }
  return value;
}

/** The schema governing a path of a document (following union branches the document picks). */
export function schemaAt(root: z.ZodType, path: readonly PropertyKey[], document: unknown): z.ZodType | undefined {
  let schema: z.ZodType | undefined = root;
  for (let index = 0; index < path.length && schema !== undefined; index += 1) {
    const key = path[index];
    if (typeof key === 'symbol' || key === undefined) return undefined;
    schema = childSchema(schema, key, valueAt(document, path.slice(0, index)));
  }
  return schema;
}

/** Renders a path for people: `balance.targets.jam`, `training.hidden[1]`, `kafka.settings["sasl.password"]`. */
export function formatPath(path: readonly PropertyKey[]): string {
  let text = '';
  for (const key of path) {
    if (typeof key === 'number') text += `[${key}]`;
    else if (/^[A-Za-z_][A-Za-z0-9_-]*$/.test(String(key))) text += text === '' ? String(key) : `.${String(key)}`;
    else text += `[${JSON.stringify(String(key))}]`;
  }
  return text;
}
