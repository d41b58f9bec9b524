import * as z from 'zod';
import { peel, unionBranches } from './schema-walk.js';

/**
 * Words for what a schema node accepts: a short label for the reference table (`integer ≥ 1`) and a
 * phrase for error messages (`an integer ≥ 1`). Both read the schema's own checks, so they cannot
 * disagree with validation.
 */

interface Bound {
  readonly value: number;
  readonly inclusive: boolean;
}

interface Bounds {
  readonly lower?: Bound;
  readonly upper?: Bound;
  readonly minLength?: number;
}

function boundsOf(schema: z.ZodType): Bounds {
  const bounds: { lower?: Bound; upper?: Bound; minLength?: number } = {};
  for (const check of schema._zod.def.checks ?? []) {
    const def = check._zod.def as { check: string; value?: unknown; inclusive?: boolean; minimum?: unknown };
    if (def.check === 'greater_than' && typeof def.value === 'number') bounds.lower = { value: def.value, inclusive: def.inclusive === true };
    if (def.check === 'less_than' && typeof def.value === 'number') bounds.upper = { value: def.value, inclusive: def.inclusive === true };
    if (def.check === 'min_length' && typeof def.minimum === 'number') bounds.minLength = def.minimum;
  }
  return bounds;
}

function rangeText({ lower, upper }: Bounds): string {
  if (lower !== undefined && upper !== undefined) {
    if (lower.inclusive && upper.inclusive) return ` from ${lower.value} to ${upper.value}`;
    if (!lower.inclusive && !upper.inclusive) return ` between ${lower.value} and ${upper.value} (exclusive)`;
  }
  const parts: string[] = [];
  if (lower !== undefined) parts.push(`${lower.inclusive ? '≥' : '>'} ${lower.value}`);
  if (upper !== undefined) parts.push(`${upper.inclusive ? '≤' : '<'} ${upper.value}`);
  return parts.length === 0 ? '' : ` ${parts.join(' and ')}`;
}

function quoted(values: readonly unknown[]): string[] {
  return values.map((value) => JSON.stringify(value));
}

/** One of a list, in words: `"a", "b" or "c"`. */
export function oneOf(values: readonly unknown[]): string {
  const texts = quoted(values);
  return texts.length <= 1 ? (texts[0] ?? '') : `${texts.slice(0, -1).join(', ')} or ${texts.at(-1)}`;
}

function isInteger(schema: z.ZodType): boolean {
  return schema instanceof z.ZodNumber && schema.format !== null && schema.format.includes('int');
}

/** Short type label for the config reference table. */
export function typeLabel(schema: z.ZodType): string {
  const { core } = peel(schema);
  if (core instanceof z.ZodNumber) return `${isInteger(core) ? 'integer' : 'number'}${rangeText(boundsOf(core))}`;
  if (core instanceof z.ZodURL) return 'URL';
  if (core instanceof z.ZodString) return 'string';
  if (core instanceof z.ZodBoolean) return 'boolean';
  if (core instanceof z.ZodEnum) return quoted(core.options).join(' | ');
  if (core instanceof z.ZodLiteral) return JSON.stringify(core.value);
  if (core instanceof z.ZodArray) return `list of ${typeLabel(core.element as z.ZodType)}`;
  if (core instanceof z.ZodDiscriminatedUnion) return `mapping by ${core._zod.def.discriminator}`;
  if (core instanceof z.ZodUnion) return core.options.map((option) => typeLabel(option as z.ZodType)).join(' | ');
  if (core instanceof z.ZodRecord || core instanceof z.ZodObject) return 'mapping';
  return 'value';
}

/** What a node accepts, as the end of "expected …" in an error message. */
export function expectedPhrase(schema: z.ZodType): string {
  const { core } = peel(schema);
  if (core instanceof z.ZodNumber) return `${isInteger(core) ? 'an integer' : 'a number'}${rangeText(boundsOf(core))}`;
  if (core instanceof z.ZodURL) return 'a URL';
  if (core instanceof z.ZodString) return boundsOf(core).minLength === undefined ? 'a string' : 'a non-empty string';
  if (core instanceof z.ZodBoolean) return 'true or false';
  if (core instanceof z.ZodEnum) return `one of ${oneOf(core.options)}`;
  if (core instanceof z.ZodLiteral) return JSON.stringify(core.value);
  if (core instanceof z.ZodArray) {
    const { minLength } = boundsOf(core);
    const atLeast = minLength === undefined || minLength === 0 ? '' : ` (at least ${minLength})`;
    return `a list${atLeast} of ${typeLabel(core.element as z.ZodType)}`;
  }
  if (core instanceof z.ZodDiscriminatedUnion) {
    return `a mapping with ${core._zod.def.discriminator}: ${oneOf([...unionBranches(core).keys()])}`;
  }
  if (core instanceof z.ZodUnion) return `one of: ${core.options.map((option) => typeLabel(option as z.ZodType)).join(', ')}`;
  if (core instanceof z.ZodObject) return `a mapping with keys ${Object.keys(core.shape).join(', ')}`;
  if (core instanceof z.ZodRecord) return 'a mapping';
  return 'a valid value';
}
