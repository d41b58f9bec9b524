/**
 * What `raretide check` finds in `model.dir`: no model yet, or a model that loads, verifies and reads
 * the records the config describes — the same schema checks `run` makes at start-up, done offline. The
 * result is data; check/model-report.ts renders it.
 */
import { RaretideError } from '../../../config/errors.js';
import type { ConfigWith } from '../../../config/requirements.js';
import type { FramingConfig } from '../../../config/schema.js';
import type { FieldTable } from '../../../model/features/index.js';
import type { FitRecordCounts } from '../../../model/fit-attachments.js';
import { loadTrainedModel, type TrainedModel } from '../../../model/trained-model.js';
import { inputFraming } from '../../avro/framings-from-config.js';
import { knownSchema, loadSchemaFile, type KnownSchema } from '../../avro/known-schema.js';

export type ModelCheckResult = { readonly kind: 'absent'; readonly directory: string } | PresentModel;

export interface SchemaCheck {
  readonly subject: 'reader' | 'source' | 'sink';
  readonly text: string;
}

export interface PresentModel {
  readonly kind: 'present';
  readonly directory: string;
  readonly id: string;
  /** CRC-64-AVRO of the schema the model was fitted on, hex. */
  readonly schemaFingerprint: string;
  readonly labelPath: string;
  readonly records: FitRecordCounts;
  /** Classes in model order, with their training counts. */
  readonly classes: readonly { readonly name: string; readonly count: number }[];
  /** One entry per schema checked, saying what was compared with what. */
  readonly schemaChecks: readonly SchemaCheck[];
  /** Things that do not stop `run` but likely are not what was meant. */
  readonly warnings: readonly string[];
  /** The field policies and encodings the model was fitted with. */
  readonly fields: FieldTable;
}

/**
 * Loads the model in `model.dir` and checks it against the config. A missing directory (or one without
 * a manifest) is `absent`, not an error. A corrupt model throws `model.corrupt` (CLI exit 1); a schema
 * that cannot be read as the model's throws a UsageError (exit 2), as `run` would.
 */
export async function checkModel(config: ConfigWith<'model'>): Promise<ModelCheckResult> {
  const directory = config.model.dir;
  let model: TrainedModel;
  try {
    model = await loadTrainedModel(directory);
  } catch (error) {
    if (isMissing(error)) return { kind: 'absent', directory };
    throw error;
  }
  try {
    const reader = await readerSchema(config.source?.readerSchemaFile, model);
    const schemaChecks: SchemaCheck[] = [{ subject: 'reader', text: readerText(config.source?.readerSchemaFile, model) }];
    if (config.source !== undefined) {
      // The check `run` makes: every configured writer schema must resolve to the reader schema.
      await inputFraming(config.source.framing, reader);
      schemaChecks.push({ subject: 'source', text: sourceText(config.source.framing) });
    }
    if (config.sink?.framing !== undefined) schemaChecks.push({ subject: 'sink', text: await sinkText(config.sink.framing, reader) });
    return {
      kind: 'present',
      directory,
      id: model.id,
      schemaFingerprint: model.schemaFingerprint,
      labelPath: model.labelPath,
      records: model.records,
      classes: model.classNames.map((name) => ({ name, count: model.records.perClass[name] ?? 0 })),
      schemaChecks,
      warnings: warnings(config, model),
      fields: model.codec.describe(),
    };
  } finally {
    model.dispose();
  }
}

/** `model.missing` caused by a file that is not there; unreadable for another reason stays an error. */
function isMissing(error: unknown): boolean {
  if (!(error instanceof RaretideError) || error.code !== 'model.missing') return false;
  return (error.cause as NodeJS.ErrnoException | undefined)?.code === 'ENOENT';
}

/** As `run` resolves it: the configured reader schema, which must be the model's, else the model's own. */
async function readerSchema(readerSchemaFile: string | undefined, model: TrainedModel): Promise<KnownSchema> {
  const reader = readerSchemaFile === undefined ? knownSchema(model.schema, `the schema of model ${model.id}`) : await loadSchemaFile(readerSchemaFile);
  model.checkSchema(reader.fingerprint.hex, reader.source);
  return reader;
}

function readerText(readerSchemaFile: string | undefined, model: TrainedModel): string {
  return readerSchemaFile === undefined
    ? `the model's schema ${model.schemaFingerprint}`
    : `source.readerSchemaFile ${readerSchemaFile} is the model's schema ${model.schemaFingerprint}`;
}

function sourceText(framing: FramingConfig): string {
  switch (framing.kind) {
    case 'raw':
      return `source.framing.schemaFile ${framing.schemaFile} resolves to the reader schema`;
    case 'single-object':
      return `source.framing.schemaFiles ${framing.schemaFiles.join(', ')} resolve to the reader schema`;
    case 'registry':
      return `registry framing (${framing.url}): writer schemas are checked per record as they arrive, not here`;
  }
}

/**
 * The sink's own framing: its schema files must load. Synthetic records are made in the reader schema,
 * so a different output schema is worth a look; a registry id is checked by `run` against the registry.
 */
async function sinkText(framing: FramingConfig, reader: KnownSchema): Promise<string> {
  if (framing.kind === 'registry') {
    return `registry framing (${framing.url}): run checks at start-up that outputSchemaId ${framing.outputSchemaId ?? '(not set)'} holds the reader schema`;
  }
  const files = framing.kind === 'raw' ? [framing.schemaFile] : framing.schemaFiles;
  const schemas = await Promise.all(files.map((file) => loadSchemaFile(file)));
  const differing = schemas.filter((schema) => schema.fingerprint.hex !== reader.fingerprint.hex).map((schema) => schema.source);
  return differing.length === 0
    ? `sink.framing writes with the reader schema`
    : `sink.framing writes with ${differing.join(', ')}, not the reader schema: synthetic records that do not fit it are dropped and counted, an original that does not fit stops the worker`;
}

/** Config entries the model cannot serve: they pass `run`'s checks but make nothing happen. */
function warnings(config: ConfigWith<'model'>, model: TrainedModel): string[] {
  const found: string[] = [];
  if (config.label?.from === 'field' && config.label.path !== model.labelPath) {
    found.push(
      `label.path = ${config.label.path}, but the model was fitted with classes from field ${model.labelPath}: ` +
        'refit with this label, or set label.path to the model\'s',
    );
  }
  for (const target of Object.keys(config.balance?.targets ?? {})) {
    if (!model.classNames.includes(target)) {
      found.push(
        `balance.targets.${target}: the model knows no class ${target} (it knows ${model.classNames.join(', ')}), so none will be made: ` +
          'refit on records that include it, or remove the target',
      );
    }
  }
  return found;
}
