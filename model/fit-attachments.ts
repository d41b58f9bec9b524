/**
 * What `fitModel` stores in the model directory beside the VAE (the `attachments` of the manifest,
 * covered by the model id): the feature codec, the Avro schema with its CRC-64-AVRO fingerprint, the
 * label path, the record counts and the drift reference. `readFitAttachments` is the one reader, so a
 * model directory written by something else is refused with a message instead of failing later.
 */
import { RaretideError } from '../config/errors.js';
import type { DriftReference } from './drift/reference.js';
import type { FeatureCodecJson } from './features/codec-json.js';
import type { Attachments } from './vae/artifact.js';

/** Records seen by `fitModel`, and what became of them. */
export interface FitRecordCounts {
  /** Records read from the source. */
  readonly read: number;
  /** Records encoded and trained on. */
  readonly trained: number;
  /** Records whose label field was null or absent (skipped). */
  readonly missingLabel: number;
  /** Records whose class was not in the codec's sample (skipped). */
  readonly unknownLabel: number;
  /** Trained records per class name. */
  readonly perClass: Readonly<Record<string, number>>;
}

export interface FitAttachments {
  /** `FeatureCodec.toJSON()`. */
  readonly featureCodec: FeatureCodecJson;
  /** The Avro record schema as JSON text, whole (docs and logical types kept). */
  readonly avroSchema: string;
  /** CRC-64-AVRO of the schema's Parsing Canonical Form, 8 bytes little-endian as hex. */
  readonly schemaFingerprint: string;
  /** Dotted path of the class field. */
  readonly labelPath: string;
  readonly records: FitRecordCounts;
  /**
   * Negative-ELBO quantiles of held-out rows, for the worker's drift metrics. Absent in models fitted
   * before it existed: they load, without drift metrics (read it with `readDriftReference`).
   */
  readonly driftReference?: DriftReference;
}

/** The attachments as stored (plain JSON data). */
export function fitAttachments(attachments: FitAttachments): Attachments {
  return { ...attachments };
}

/** Reads the attachments of a loaded model; refuses a directory `fitModel` did not write. */
export function readFitAttachments(attachments: Attachments, directory: string): FitAttachments {
  const missing = (['featureCodec', 'avroSchema', 'schemaFingerprint', 'labelPath', 'records'] as const).filter((key) => {
    const value = attachments[key];
    const expected = key === 'featureCodec' || key === 'records' ? 'object' : 'string';
    return value === null || typeof value !== expected;
  });
  if (missing.length > 0) {
    throw new RaretideError(
      'model.incomplete',
      `model directory ${directory} lacks ${missing.join(', ')} in its manifest attachments, so it was not written by \`raretide fit\`; refit the model with \`raretide fit\``,
    );
  }
  return attachments as unknown as FitAttachments;
}
