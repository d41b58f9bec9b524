/**
 * A model directory written by `fitModel` + `saveModel`, loaded whole: the verified VAE (checksums
 * and content id, see vae/artifact.ts), the feature codec rebuilt from its attachment, and the Avro
 * schema checked against the fingerprint stored with it. `checkSchema` lets a caller refuse a model
 * whose schema is not the one its records are read as.
 */
import type { Type } from 'avsc';
import { RaretideError, UsageError } from '../config/errors.js';
import { schemaFingerprint } from './avro/fingerprint.js';
import { parseSchemaWithLogicalTypes, type AvroSchemaJson } from './features/avro-types.js';
import { FeatureCodec } from './features/feature-codec.js';
import { readFitAttachments, type FitRecordCounts } from './fit-attachments.js';
import { canonicalJson, loadModel, type LoadedModel } from './vae/artifact.js';

export interface TrainedModel {
  /** Content-hash id of the model. */
  readonly id: string;
  readonly directory: string;
  /** The network, layout, guard reference and training record. */
  readonly vae: LoadedModel;
  readonly codec: FeatureCodec;
  /** The Avro record schema records are read and written as, and its JSON text. */
  readonly schema: AvroSchemaJson;
  readonly schemaText: string;
  /** avsc type of the schema (logical types kept as their underlying values), for validity checks. */
  readonly schemaType: Type;
  /** CRC-64-AVRO of the schema, as hex. */
  readonly schemaFingerprint: string;
  readonly labelPath: string;
  /** Class names in model order. */
  readonly classNames: readonly string[];
  readonly records: FitRecordCounts;
  /**
   * Throws `model.schema-mismatch` (a UsageError) unless `fingerprint` (hex CRC-64-AVRO) is the
   * model's schema; `origin` names where the other schema came from, for the message.
   */
  checkSchema(fingerprint: string, origin: string): void;
  dispose(): void;
}

/**
 * Loads and verifies a model directory. Refuses with `model.corrupt` when the stored fingerprint
 * is not the stored schema's or the codec does not match the network, and `model.incomplete` when
 * the directory lacks what `fitModel` stores.
 */
export async function loadTrainedModel(directory: string, options: { expectedId?: string } = {}): Promise<TrainedModel> {
  const vae = await loadModel(directory, options);
  try {
    const attachments = readFitAttachments(vae.attachments, directory);
    const schema = parseStoredSchema(attachments.avroSchema, directory);
    const computed = fingerprintOf(schema, directory);
    if (computed !== attachments.schemaFingerprint) {
      throw corrupt(directory, `its Avro schema has fingerprint ${computed} but the manifest records ${attachments.schemaFingerprint}`);
    }
    let codec: FeatureCodec;
    try {
      codec = FeatureCodec.fromJSON(attachments.featureCodec);
    } catch (cause) {
      throw corrupt(directory, `its feature codec does not load (${(cause as Error).message})`);
    }
    if (fingerprintOf(codec.schema, directory) !== computed) {
      throw corrupt(directory, 'its feature codec was built for another schema than the one stored');
    }
    if (canonicalJson(codec.layout) !== canonicalJson(vae.layout) || canonicalJson(codec.classes) !== canonicalJson(vae.classNames)) {
      throw corrupt(directory, 'its feature codec does not match the network (layout or classes differ)');
    }
    const id = vae.id;
    return {
      id,
      directory,
      vae,
      codec,
      schema,
      schemaText: attachments.avroSchema,
      schemaType: parseSchemaWithLogicalTypes(schema),
      schemaFingerprint: computed,
      labelPath: attachments.labelPath,
      classNames: vae.classNames,
      records: attachments.records,
      checkSchema(fingerprint: string, origin: string): void {
        if (fingerprint === computed) return;
        throw new UsageError(
          `model ${id} (${directory}) was fitted on Avro schema ${computed}, but ${origin} has schema ${fingerprint}: ` +
            `refit the model on these records (\`raretide fit\`), or set source.readerSchemaFile to the model's schema so records are resolved to it`,
          { code: 'model.schema-mismatch' },
        );
      },
      dispose: () => vae.dispose(),
    };
  } catch (error) {
    vae.dispose();
    throw error;
  }
}

function parseStoredSchema(text: string, directory: string): AvroSchemaJson {
  try {
    return JSON.parse(text) as AvroSchemaJson;
  } catch {
    throw corrupt(directory, 'its Avro schema attachment is not JSON');
  }
}

function fingerprintOf(schema: AvroSchemaJson, directory: string): string {
  try {
    return schemaFingerprint(schema).hex;
  } catch (cause) {
    throw corrupt(directory, `its Avro schema is not valid (${(cause as Error).message})`);
  }
}

function corrupt(directory: string, reason: string): RaretideError {
  return new RaretideError(
    'model.corrupt',
    `model directory ${directory} is corrupt: ${reason}. Refit the model with \`raretide fit\` (or restore the directory from a copy).`,
  );
}
