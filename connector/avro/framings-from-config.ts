/**
 * The framings of the worker's topics, built from the `source.framing` and `sink.framing` config
 * sections, and the start-up check that every configured writer schema can be read as the reader schema
 * (a registry's schemas are only known per record, so those are checked as records arrive).
 */
import { UsageError } from '../../config/errors.js';
import type { FramingConfig } from '../../config/schema.js';
import type { Framing } from './framing.js';
import { loadSchemaFile, type KnownSchema } from './known-schema.js';
import { RawFraming } from './raw-framing.js';
import { RegistryFraming } from './registry-framing.js';
import { ReaderResolution } from './resolution.js';
import { HttpSchemaRegistry } from './schema-registry.js';
import { SingleObjectFraming } from './single-object-framing.js';

export interface TopicFramings {
  /** How source payloads are unframed. */
  readonly input: Framing;
  /** How outputs (originals passed through and synthetic records) are framed. */
  readonly output: Framing;
}

/**
 * Input framing from `source.framing`; output framing from `sink.framing`, or else the source's kind
 * written with the reader schema (the shape synthetic records are made in).
 */
export async function topicFramings(source: FramingConfig, sink: FramingConfig | undefined, reader: KnownSchema): Promise<TopicFramings> {
  const input = await inputFraming(source, reader);
  return { input, output: await outputFraming(sink ?? source, reader, sink === undefined) };
}

export async function inputFraming(config: FramingConfig, reader: KnownSchema): Promise<Framing> {
  switch (config.kind) {
    case 'raw': {
      const writer = await loadSchemaFile(config.schemaFile);
      checkReadable(writer, reader, 'source.framing.schemaFile');
      return new RawFraming(writer);
    }
    case 'single-object': {
      const writers = await Promise.all(config.schemaFiles.map((file) => loadSchemaFile(file)));
      for (const writer of writers) checkReadable(writer, reader, 'source.framing.schemaFiles');
      return new SingleObjectFraming(writers);
    }
    case 'registry':
      return new RegistryFraming(new HttpSchemaRegistry({ url: config.url }));
  }
}

/** `inherited`: the sink has no framing of its own, so the source's is reused with the reader schema. */
async function outputFraming(config: FramingConfig, reader: KnownSchema, inherited: boolean): Promise<Framing> {
  switch (config.kind) {
    case 'raw':
      return new RawFraming(inherited ? reader : await loadSchemaFile(config.schemaFile));
    case 'single-object':
      return new SingleObjectFraming(inherited ? [reader] : await Promise.all(config.schemaFiles.map((file) => loadSchemaFile(file))));
    case 'registry':
      return registryOutputFraming(config, reader, inherited ? 'source.framing' : 'sink.framing');
  }
}

/** Registry framing for writing: the configured id must hold the schema records are written with. */
async function registryOutputFraming(config: Extract<FramingConfig, { kind: 'registry' }>, schema: KnownSchema, field: string): Promise<Framing> {
  if (config.outputSchemaId === undefined) {
    throw new UsageError(
      `${field}.outputSchemaId is missing: to write registry framing, register the output schema and give its id ` +
        '(raretide registers no schemas), or set sink.framing to raw or single-object',
    );
  }
  const framing = new RegistryFraming(new HttpSchemaRegistry({ url: config.url }), { schema, schemaId: config.outputSchemaId });
  const checked = await framing.checkOutput();
  if (!checked.ok) throw new UsageError(`${field}.outputSchemaId = ${config.outputSchemaId}: ${checked.problem.reason}`, { code: 'avro.schema-mismatch' });
  return framing;
}

function checkReadable(writer: KnownSchema, reader: KnownSchema, field: string): void {
  const resolved = new ReaderResolution(reader).resolverFor(writer);
  if (!resolved.ok) throw new UsageError(`${field}: ${resolved.problem.reason}`, { code: 'avro.schema-mismatch' });
}
