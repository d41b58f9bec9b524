/**
 * Every config shipped in config/examples/ must work as given: it validates with the loader, and the
 * schema files it names exist (read from the repository root, the working directory the examples'
 * commands are run from) and fit the label, field policies and balance targets it sets.
 */
import { readdir, readFile } from 'node:fs/promises';
import { join } from 'node:path';
import type avro from 'avsc';
import { describe, expect, it } from 'vitest';
import { loadSchemaFile, type KnownSchema } from '../../../connector/avro/known-schema.js';
import { loadConfigFile } from '../../../config/load.js';
import { requireSections } from '../../../config/requirements.js';
import type { FramingConfig, RaretideConfig } from '../../../config/schema.js';

const EXAMPLES = 'config/examples';
const files = (await readdir(EXAMPLES)).filter((file) => /\.(ya?ml|json)$/.test(file)).sort();

function schemaFilesOf(framing: FramingConfig | undefined): string[] {
  if (framing === undefined || framing.kind === 'registry') return [];
  return framing.kind === 'raw' ? [framing.schemaFile] : framing.schemaFiles;
}

function allSchemaFiles(config: RaretideConfig): string[] {
  return [
    ...schemaFilesOf(config.source?.framing),
    ...(config.source?.readerSchemaFile === undefined ? [] : [config.source.readerSchemaFile]),
    ...schemaFilesOf(config.sink?.framing),
  ];
}

/** The type at a dotted field path, looking through nullable unions; undefined when a step is missing. */
function typeAt(type: avro.Type, path: string): avro.Type | undefined {
  let current: avro.Type | undefined = type;
  for (const name of path.split('.')) {
    current = current === undefined ? undefined : withoutNull(current);
    if (current?.typeName !== 'record') return undefined;
    current = (current as avro.types.RecordType).field(name)?.type;
  }
  return current === undefined ? undefined : withoutNull(current);
}

function withoutNull(type: avro.Type): avro.Type {
  if (!type.typeName.startsWith('union')) return type;
  const branches = (type as avro.types.UnwrappedUnionType).types.filter((branch) => branch.typeName !== 'null');
  return branches.length === 1 ? branches[0]! : type;
}

/** The schema records are read as: the reader schema when set, else the (first) writer schema. */
async function readerOf(config: RaretideConfig): Promise<KnownSchema | undefined> {
  const file = config.source?.readerSchemaFile ?? schemaFilesOf(config.source?.framing)[0];
  return file === undefined ? undefined : loadSchemaFile(file);
}

describe('config/examples', () => {
  it('holds the examples the README and the deploy files point to', () => {
    expect(files).toContain('minimal.yaml');
    expect(files).toContain('payments.yaml');
  });

  describe.each(files)('%s', (file) => {
    const path = join(EXAMPLES, file);

    it('validates with the loader', async () => {
      await expect(loadConfigFile(path)).resolves.toBeDefined();
    });

    it('names schema files that exist and are Avro schemas', async () => {
      const config = await loadConfigFile(path);
      for (const schemaFile of allSchemaFiles(config)) {
        await expect(loadSchemaFile(schemaFile), `${file}: ${schemaFile}`).resolves.toBeDefined();
      }
    });

    it('labels, overrides and balances fields that its schema has', async () => {
      const config = await loadConfigFile(path);
      const reader = await readerOf(config);
      if (reader === undefined) return;
      for (const fieldPath of Object.keys(config.fields)) expect(typeAt(reader.type, fieldPath), `fields.${fieldPath}`).toBeDefined();
      if (config.label?.from !== 'field') return;
      const labelType = typeAt(reader.type, config.label.path);
      expect(labelType, `label.path ${config.label.path}`).toBeDefined();
      if (labelType?.typeName === 'enum') {
        const symbols = (labelType as avro.types.EnumType).symbols;
        for (const target of Object.keys(config.balance?.targets ?? {})) expect(symbols, `balance.targets.${target}`).toContain(target);
      }
    });
  });
});

describe('config/examples/payments.yaml', () => {
  it('is complete for `run`, with fraud and chargeback as its rare classes', async () => {
    const config = requireSections(await loadConfigFile(join(EXAMPLES, 'payments.yaml')), 'run', ['kafka', 'source', 'sink', 'label', 'balance', 'model']);
    expect(Object.keys(config.balance.targets).sort()).toEqual(['chargeback', 'fraud']);
    expect(config.metrics.host).toBe('127.0.0.1');
  });

  it('explains each section in a comment above it, and says the scenario is invented', async () => {
    const lines = (await readFile(join(EXAMPLES, 'payments.yaml'), 'utf8')).split('\n');
    expect(lines.slice(0, 3).join(' ')).toMatch(/invented scenario/i);
    lines.forEach((line, index) => {
      if (/^[A-Za-z]\w*:/.test(line)) expect(lines[index - 1], `comment above ${line}`).toMatch(/^#/);
    });
  });
});
