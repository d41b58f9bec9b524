import { stringify } from 'yaml';
import * as z from 'zod';
import { typeLabel } from './describe-type.js';
import { configSchema } from './schema.js';
import { peel, unionBranches } from './schema-walk.js';

/**
 * Generates the config reference (one markdown table per section) from the schema itself, so the
 * README's reference cannot drift from what validation accepts.
 */

export interface ReferenceRow {
  /** Dotted path; `<class>`-style placeholders stand for keys the user chooses. */
  readonly path: string;
  readonly type: string;
  /** The default in YAML flow style, `required`, or `—` for optional entries without one. */
  readonly defaultText: string;
  readonly description: string;
}

export interface ReferenceSection {
  readonly name: string;
  readonly description: string;
  /** True when the file may leave the section out. */
  readonly optional: boolean;
  readonly rows: readonly ReferenceRow[];
}

interface WalkState {
  readonly path: readonly string[];
  /** `kind: raw` when the entry exists only in one branch of a union. */
  readonly condition?: string;
  /** Default inherited from an enclosing default mapping, e.g. `balance.counting` → its `mode`. */
  readonly inherited?: unknown;
  /** Description of an enclosing record, for entries whose value schema has none. */
  readonly descriptionFallback?: string;
}

function flow(value: unknown): string {
  return stringify(value, { collectionStyle: 'flow', flowCollectionPadding: false, lineWidth: 0 }).trim();
}

function leafRow(schema: z.ZodType, state: WalkState): ReferenceRow {
  const peeled = peel(schema);
  const defaultValue = peeled.hasDefault ? peeled.defaultValue : state.inherited;
  const defaultText = defaultValue !== undefined ? flow(defaultValue) : peeled.optional ? '—' : 'required';
  const description = peeled.meta.description ?? state.descriptionFallback ?? '';
  return {
    path: state.path.join('.'),
    type: typeLabel(schema),
    defaultText,
    description: state.condition === undefined ? description : `With \`${state.condition}\`: ${description}`,
  };
}

function childDefault(parent: unknown, key: string): unknown {
  return typeof parent === 'object' && parent !== null ? (parent as Record<string, unknown>)[key] : undefined;
}

/** A row for the discriminator (`source.framing.kind`), then each branch's entries, marked with their kind. */
function unionRows(schema: z.ZodType, union: z.ZodDiscriminatedUnion, state: WalkState, rows: ReferenceRow[]): void {
  const discriminator = union._zod.def.discriminator;
  const branches = unionBranches(union);
  const row = leafRow(schema, state);
  const defaultKind = childDefault(state.inherited, discriminator);
  rows.push({
    ...row,
    path: [...state.path, discriminator].join('.'),
    type: [...branches.keys()].map((value) => JSON.stringify(value)).join(' | '),
    defaultText: defaultKind === undefined ? row.defaultText : flow(defaultKind),
  });
  for (const [value, branch] of branches) {
    for (const [key, child] of Object.entries(branch.shape)) {
      if (key !== discriminator) walk(child as z.ZodType, { path: [...state.path, key], condition: `${discriminator}: ${value}` }, rows);
    }
  }
}

function walk(schema: z.ZodType, state: WalkState, rows: ReferenceRow[]): void {
  const peeled = peel(schema);
  const { core } = peeled;
  const ownDefault = peeled.hasDefault ? peeled.defaultValue : state.inherited;
  if (core instanceof z.ZodObject) {
    for (const [key, child] of Object.entries(core.shape)) {
      walk(child as z.ZodType, { ...state, path: [...state.path, key], inherited: childDefault(ownDefault, key) }, rows);
    }
  } else if (core instanceof z.ZodDiscriminatedUnion) {
    unionRows(schema, core, { ...state, inherited: ownDefault }, rows);
  } else if (core instanceof z.ZodRecord) {
    const placeholder = `<${peel(core._zod.def.keyType as z.ZodType).meta.title ?? 'key'}>`;
    const valueSchema = core._zod.def.valueType as z.ZodType;
    const recordState = { ...state, path: [...state.path, placeholder], inherited: undefined, descriptionFallback: peeled.meta.description };
    const valueCore = peel(valueSchema).core;
    if (valueCore instanceof z.ZodObject || valueCore instanceof z.ZodDiscriminatedUnion) walk(valueSchema, recordState, rows);
    // Each entry of a user-keyed mapping is optional by nature; what is required is said in the description.
    else rows.push({ ...leafRow(valueSchema, recordState), defaultText: '—' });
  } else {
    rows.push(leafRow(schema, state));
  }
}

/** The reference, section by section, for the given schema (the config schema by default). */
export function referenceSections(schema: z.ZodObject = configSchema): ReferenceSection[] {
  return Object.entries(schema.shape).map(([name, section]) => {
    const peeled = peel(section as z.ZodType);
    const optional = peeled.optional && !peeled.hasDefault;
    // A section that may be left out is described as it must be written when present.
    const rows: ReferenceRow[] = [];
    walk(optional ? peeled.core : (section as z.ZodType), { path: [name] }, rows);
    return { name, description: peeled.meta.description ?? '', optional, rows };
  });
}

function cell(text: string): string {
  return text.replace(/\|/g, '\\|').replace(/\n/g, ' ');
}

function tableLine(row: ReferenceRow): string {
  const defaultCell = row.defaultText === 'required' || row.defaultText === '—' ? row.defaultText : `\`${row.defaultText}\``;
  return `| \`${cell(row.path)}\` | ${cell(row.type)} | ${cell(defaultCell)} | ${cell(row.description)} |`;
}

/** Markdown: a heading, a sentence and a table per section. */
export function renderReference(schema: z.ZodObject = configSchema): string {
  const parts = referenceSections(schema).map((section) => {
    const presence = section.optional
      ? 'Optional section; `required` entries are required when it is present.'
      : 'Always present; every entry has a default.';
    const lines = [
      `### \`${section.name}\``,
      '',
      `${section.description} ${presence}`,
      '',
      '| Path | Type | Default | Description |',
      '| --- | --- | --- | --- |',
      ...section.rows.map(tableLine),
    ];
    return lines.join('\n');
  });
  return `${parts.join('\n\n')}\n`;
}
