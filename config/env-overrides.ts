import { parse as parseYaml } from 'yaml';
import * as z from 'zod';
import { didYouMean } from './did-you-mean.js';
import { expectedPhrase, typeLabel } from './describe-type.js';
import { ConfigError, type ConfigProblem } from './errors.js';
import { renderValue } from './render-value.js';
import { namesSecret, pathHoldsSecret, REDACTED } from './secret-names.js';
import { allowedKeys, childSchema, formatPath, isOpenMapping, peel, valueAt } from './schema-walk.js';

/**
 * The environment override rule (one rule, documented in config/README.md):
 *
 *   RARETIDE__<SEGMENT>__<SEGMENT>…=value  sets the config entry at that path.
 *
 * - `__` (two underscores) separates path segments; single `_`, `.` and `-` are part of a segment.
 * - A segment matches a key ignoring case and the characters `_ . -`: `MAX_PER_RECORD` matches
 *   `maxPerRecord`, `SASL_PASSWORD` matches `sasl.password`. The keys are the schema's, or for open
 *   mappings (`balance.targets`, `fields`, `kafka.settings`) the ones the file already has.
 * - Where the schema expects text (strings, enum words), the value is taken verbatim; elsewhere it is
 *   read as YAML, so `0.05`, `true`, `[64, 64]` and `{jam: 0.05}` work.
 * - A mapping value is merged into a mapping already there, unless it switches a union to another
 *   kind (`{kind: registry}` over `kind: raw`); anything else replaces what is there.
 * - Shorter paths apply first, then by name, so `RARETIDE__BALANCE='{…}'` can be refined by
 *   `RARETIDE__BALANCE__SEED=7`.
 */
export const ENV_PREFIX = 'RARETIDE__';

export type Environment = Readonly<Record<string, string | undefined>>;

export interface Overridden {
  readonly document: Record<string, unknown>;
  /** Which variable set each path, keyed by `formatPath`, so errors can name it. */
  readonly origins: Map<string, string>;
}

interface Override {
  readonly variable: string;
  readonly segments: readonly string[];
  readonly raw: string;
}

type Mapping = Record<string, unknown>;

function isMapping(value: unknown): value is Mapping {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

const normalise = (key: string): string => key.toLowerCase().replace(/[._-]/g, '');

/** Applies every `RARETIDE__…` variable to a copy of the document; all bad variables are reported together. */
export function applyEnvOverrides(document: Mapping, env: Environment, schema: z.ZodType): Overridden {
  const overrides = collectOverrides(env);
  const result = structuredClone(document);
  const origins = new Map<string, string>();
  const problems: ConfigProblem[] = [];
  for (const override of overrides) {
    try {
      const path = applyOverride(result, override, schema);
      origins.set(formatPath(path), override.variable);
    } catch (error) {
      if (!(error instanceof ConfigError)) throw error;
      problems.push(...error.problems);
    }
  }
  if (problems.length > 0) throw new ConfigError(problems);
  return { document: result, origins };
}

function collectOverrides(env: Environment): Override[] {
  const overrides: Override[] = [];
  for (const [variable, raw] of Object.entries(env)) {
    if (!variable.startsWith(ENV_PREFIX) || raw === undefined) continue;
    overrides.push({ variable, segments: variable.slice(ENV_PREFIX.length).split('__'), raw });
  }
  return overrides.sort((a, b) => a.segments.length - b.segments.length || a.variable.localeCompare(b.variable));
}

function reject(override: Override, fix: string): never {
  // A variable naming a credential may hold one: its value is never repeated.
  const shown = override.segments.some(namesSecret) ? REDACTED : renderValue(override.raw);
  const message = `config error: ${override.variable}=${shown}: ${fix}`;
  throw new ConfigError([{ path: '', code: 'env_override', message }]);
}

/** Resolves the variable's path against schema and document, then writes its value; returns the path. */
function applyOverride(document: Mapping, override: Override, root: z.ZodType): string[] {
  const path: string[] = [];
  let schema: z.ZodType = root;
  for (const [index, segment] of override.segments.entries()) {
    if (segment === '') {
      reject(override, `empty path segment; separate segments with exactly two underscores, e.g. ${ENV_PREFIX}BALANCE__SEED`);
    }
    const value = valueAt(document, path);
    const where = path.length === 0 ? 'the config' : formatPath(path);
    const keys = allowedKeys(schema, value);
    if (keys === undefined) {
      const holds = `${where} holds ${expectedPhrase(schema)}, not a mapping with an entry ${JSON.stringify(segment)}`;
      reject(override, `${holds}; end the variable name at ${where}`);
    }
    const matches = keys.filter((key) => normalise(key) === normalise(segment));
    if (matches.length > 1) {
      reject(override, `${JSON.stringify(segment)} matches several keys of ${where} (${matches.join(', ')}); rename one of them in the file`);
    }
    const key = matches[0] ?? reject(override, noMatchFix(schema, index, keys, where, override));
    const child = childSchema(schema, key, value);
    if (child === undefined) reject(override, `${where} has no entry ${JSON.stringify(key)}`);
    path.push(key);
    schema = child;
  }
  if (path.length === 0) reject(override, `no path after ${ENV_PREFIX}; name an entry, e.g. ${ENV_PREFIX}BALANCE__SEED`);
  setAt(document, path, readValue(override, schema), schema, override);
  return path;
}

function noMatchFix(schema: z.ZodType, index: number, keys: readonly string[], where: string, override: Override): string {
  const segment = override.segments[index] ?? '';
  const variableUpTo = (end: number): string => ENV_PREFIX + override.segments.slice(0, end).join('__');
  if (isOpenMapping(schema)) {
    return (
      `${where} has no entry matching ${JSON.stringify(segment)}; name the entry in the file first, ` +
      `or set the whole mapping as YAML, e.g. ${variableUpTo(index)}='{<key>: <value>}'`
    );
  }
  const byNormalForm = new Map(keys.map((key) => [normalise(key), key]));
  const suggestion = didYouMean(normalise(segment), [...byNormalForm.keys()]);
  const suggested = suggestion === undefined ? undefined : byNormalForm.get(suggestion);
  if (suggested === undefined) return `${where} has no key matching ${JSON.stringify(segment)}; its keys are ${keys.join(', ')}`;
  const segments = [...override.segments.slice(0, index), variableName(suggested), ...override.segments.slice(index + 1)];
  const corrected = ENV_PREFIX + segments.join('__');
  return `${where} has no key matching ${JSON.stringify(segment)}; did you mean ${corrected}?`;
}

/** The variable-name spelling of a key: `maxPerRecord` → `MAX_PER_RECORD`. */
function variableName(key: string): string {
  return key.replace(/([a-z0-9])([A-Z])/g, '$1_$2').replace(/[.-]/g, '_').toUpperCase();
}

/** Verbatim text where the schema expects text; YAML everywhere else. */
function readValue(override: Override, schema: z.ZodType): unknown {
  if (acceptsText(schema)) return override.raw;
  try {
    return parseYaml(override.raw) as unknown;
  } catch (error) {
    const reason = error instanceof Error ? (error.message.split('\n')[0] ?? '') : String(error);
    return reject(override, `not a YAML value (${reason}); expected ${typeLabel(schema)}`);
  }
}

function acceptsText(schema: z.ZodType): boolean {
  const { core } = peel(schema);
  if (core instanceof z.ZodString || core instanceof z.ZodURL) return true;
  if (core instanceof z.ZodEnum) return core.options.every((option) => typeof option === 'string');
  if (core instanceof z.ZodLiteral) return typeof core.value === 'string';
  if (core instanceof z.ZodDiscriminatedUnion) return false;
  if (core instanceof z.ZodUnion) return core.options.some((option) => acceptsText(option as z.ZodType));
  return false;
}

function setAt(document: Mapping, path: readonly string[], value: unknown, schema: z.ZodType, override: Override): void {
  let holder: Mapping = document;
  for (const [index, key] of path.slice(0, -1).entries()) {
    const next = holder[key];
    if (next === undefined || next === null) holder[key] = {};
    else if (!isMapping(next)) {
      reject(override, `${formatPath(path.slice(0, index + 1))} is ${pathHoldsSecret(path.slice(0, index + 1)) ? REDACTED : renderValue(next)} in the file, not a mapping; fix the file first`);
    }
    holder = holder[key] as Mapping;
  }
  const last = path.at(-1) as string;
  holder[last] = switchesKind(schema, holder[last], value) ? value : mergeMappings(holder[last], value);
}

/** True when both values are mappings of a discriminated union and name different kinds. */
function switchesKind(schema: z.ZodType, existing: unknown, incoming: unknown): boolean {
  const { core } = peel(schema);
  if (!(core instanceof z.ZodDiscriminatedUnion) || !isMapping(existing) || !isMapping(incoming)) return false;
  const discriminator = core._zod.def.discriminator;
  return discriminator in incoming && incoming[discriminator] !== existing[discriminator];
}

function mergeMappings(existing: unknown, incoming: unknown): unknown {
  if (!isMapping(existing) || !isMapping(incoming)) return incoming;
  const merged: Mapping = { ...existing };
  for (const [key, value] of Object.entries(incoming)) merged[key] = mergeMappings(existing[key], value);
  return merged;
}
