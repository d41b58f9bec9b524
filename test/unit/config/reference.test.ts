import { describe, expect, it } from 'vitest';
import * as z from 'zod';
import { referenceSections, renderReference } from '../../../config/reference.js';
import { configSchema } from '../../../config/schema.js';

type JsonSchema = {
  type?: string;
  properties?: Record<string, JsonSchema>;
  additionalProperties?: boolean | JsonSchema;
  oneOf?: JsonSchema[];
  anyOf?: JsonSchema[];
};

/**
 * Leaf paths as zod's own JSON Schema export sees them — an independent walk of the schema to hold
 * the reference generator against. Open mappings appear as `*`.
 */
function jsonSchemaLeaves(schema: JsonSchema, path: string[], leaves: Set<string>): void {
  const branches = schema.oneOf ?? (schema.anyOf?.every((option) => option.properties !== undefined) ? schema.anyOf : undefined);
  if (branches !== undefined) {
    for (const branch of branches) jsonSchemaLeaves(branch, path, leaves);
  } else if (schema.properties !== undefined) {
    for (const [key, child] of Object.entries(schema.properties)) jsonSchemaLeaves(child, [...path, key], leaves);
  } else if (schema.type === 'object' && typeof schema.additionalProperties === 'object') {
    jsonSchemaLeaves(schema.additionalProperties, [...path, '*'], leaves);
  } else {
    leaves.add(path.join('.'));
  }
}

/** Every object in the JSON Schema that lists properties must forbid others. */
function nonStrictObjects(schema: JsonSchema, path: string, found: string[]): void {
  if (schema.properties !== undefined && schema.additionalProperties !== false) found.push(path || '(root)');
  for (const [key, child] of Object.entries(schema.properties ?? {})) nonStrictObjects(child, `${path}.${key}`, found);
  for (const option of [...(schema.oneOf ?? []), ...(schema.anyOf ?? [])]) nonStrictObjects(option, path, found);
  if (typeof schema.additionalProperties === 'object') nonStrictObjects(schema.additionalProperties, `${path}.*`, found);
}

const jsonSchema = z.toJSONSchema(configSchema, { io: 'input' }) as JsonSchema;
const rows = referenceSections().flatMap((section) => section.rows);

describe('config reference', () => {
  it('covers every leaf of the schema, and nothing else', () => {
    const expected = new Set<string>();
    jsonSchemaLeaves(jsonSchema, [], expected);
    const documented = new Set(rows.map((row) => row.path.replace(/<[^>]+>/g, '*')));
    expect([...documented].sort()).toEqual([...expected].sort());
    expect(expected.size).toBeGreaterThan(40);
  });

  it('describes every entry and gives each a type and a default column', () => {
    for (const row of rows) {
      expect(row.description, row.path).not.toBe('');
      expect(row.type, row.path).not.toBe('value');
      expect(row.defaultText, row.path).not.toBe('');
    }
  });

  it('shows defaults as they are written in YAML', () => {
    const byPath = new Map(rows.map((row) => [row.path, row]));
    expect(byPath.get('balance.maxPerRecord')?.defaultText).toBe('5');
    expect(byPath.get('training.hidden')?.defaultText).toBe('[128, 128]');
    expect(byPath.get('balance.counting.mode')?.defaultText).toBe('cumulative');
    expect(byPath.get('source.topic')?.defaultText).toBe('required');
    expect(byPath.get('balance.targets.<class>')?.type).toBe('number between 0 and 1 (exclusive)');
    expect(byPath.get('source.framing.url')?.description).toMatch(/^With `kind: registry`: /);
  });

  it('renders one markdown table per section', () => {
    const markdown = renderReference();
    for (const name of Object.keys(configSchema.shape)) expect(markdown).toContain(`### \`${name}\``);
    expect(markdown).toContain('| `delivery.guarantee` | "at-least-once" \\| "exactly-once" | `at-least-once` |');
  });
});

describe('config schema', () => {
  it('rejects unknown keys in every mapping (every object is strict)', () => {
    const found: string[] = [];
    nonStrictObjects(jsonSchema, '', found);
    expect(found).toEqual([]);
  });
});
