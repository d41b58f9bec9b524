/**
 * Fits a model to records of one Avro record schema: infers the feature codec from the first
 * records, encodes every record with its class (from the label field), trains the conditional VAE
 * and builds the privacy-guard reference and the drift reference (drift/reference.ts). The result is
 * what `saveModel` writes; the codec, the schema and its fingerprint and the drift reference ride along
 * as attachments (see fit-attachments.ts).
 *
 * Records stream through: only the codec's sample is held as objects; the rest are encoded as
 * they arrive, so memory grows with the feature rows, not with the records.
 */
import { UsageError } from '../config/errors.js';
import type { FieldPolicy } from '../config/sections/fields.js';
import { schemaFingerprint } from './avro/fingerprint.js';
import { buildDriftReference } from './drift/reference.js';
import type { AvroRecord, AvroSchemaJson } from './features/avro-types.js';
import { FeatureCodec } from './features/feature-codec.js';
import { fitAttachments, type FitRecordCounts } from './fit-attachments.js';
import type { ModelBundle } from './vae/artifact.js';
import { initBackend, type BackendName } from './vae/backend.js';
import type { TrainingData } from './vae/dataset.js';
import { buildGuardReference } from './vae/guard.js';
import { resolveHyperParameters, type VaeHyperParameters } from './vae/hyperparameters.js';
import { trainVae, type EpochReport } from './vae/train.js';

/** Records the codec is inferred from when `codecSampleSize` is not given. */
export const DEFAULT_CODEC_SAMPLE_SIZE = 100_000;

export interface FitInput {
  /** The Avro record schema the records are in (JSON form). */
  readonly schema: AvroSchemaJson;
  readonly records: Iterable<AvroRecord> | AsyncIterable<AvroRecord>;
  /** Dotted path of the class field. */
  readonly labelPath: string;
  /** Field policies overriding the inferred ones. @default {} */
  readonly policies?: Readonly<Record<string, FieldPolicy>>;
  /** VAE hyper-parameters (defaults: `DEFAULT_HYPER_PARAMETERS`). @default {} */
  readonly training?: Partial<VaeHyperParameters>;
  /**
   * The codec (marginals, categories, classes) is inferred from this many first records; a class
   * first seen after them is skipped and counted in `unknownLabel`.
   * @default 100000
   */
  readonly codecSampleSize?: number;
}

export interface FitOptions {
  /** Told, before training, the tensor backend and a line saying why it runs (`tensor backend: wasm (…)`). */
  readonly onBackend?: (backend: BackendName, message: string) => void;
  /** Called after every epoch. */
  readonly onEpoch?: (report: EpochReport) => void;
  /** Ends training after the current epoch; the best weights so far are kept and returned. */
  readonly signal?: AbortSignal;
  /** Milliseconds clock for the training curve. @default performance.now */
  readonly now?: () => number;
}

export interface FitResult {
  /** Pass to `saveModel`. */
  readonly bundle: ModelBundle;
  readonly codec: FeatureCodec;
  /** CRC-64-AVRO of the schema, as hex. */
  readonly schemaFingerprint: string;
  readonly records: FitRecordCounts;
  readonly backend: BackendName;
  /** Frees the network's tensors (after saving). */
  dispose(): void;
}

export async function fitModel(input: FitInput, options: FitOptions = {}): Promise<FitResult> {
  const hyperParameters = resolveHyperParameters(input.training ?? {});
  const sampleSize = input.codecSampleSize ?? DEFAULT_CODEC_SAMPLE_SIZE;
  if (!Number.isInteger(sampleSize) || sampleSize < 1) {
    throw new UsageError(`codecSampleSize must be a whole number ≥ 1, got ${sampleSize}`);
  }
  const fingerprint = schemaFingerprint(input.schema).hex;
  const iterator = toAsyncIterator(input.records);
  const sample: AvroRecord[] = [];
  let next = await iterator.next();
  for (; !next.done && sample.length < sampleSize; next = await iterator.next()) sample.push(next.value);
  if (sample.length === 0) throw new UsageError('fit needs at least one record, and the source holds none');

  const codec = FeatureCodec.fromSample(input.schema, sample, { labelPath: input.labelPath, policies: input.policies ?? {} });
  if (codec.classes.length === 0) {
    throw new UsageError(`no record of the first ${sample.length} has a value in label field \`${input.labelPath}\`: check label.path`);
  }
  const rows = new RowCollector(codec);
  for (const record of sample) rows.add(record);
  sample.length = 0;
  for (; !next.done; next = await iterator.next()) rows.add(next.value);
  const data = rows.trainingData();
  if (data.classes.length === 0) throw new UsageError(`no record has a known class in label field \`${input.labelPath}\``);

  let backendMessage: string | undefined;
  const backend = await initBackend({ log: (message) => (backendMessage = message) });
  options.onBackend?.(backend, backendMessage ?? `tensor backend: ${backend} (already active in this process)`);
  const trained = await trainVae(codec.layout, data, hyperParameters, {
    ...(options.onEpoch === undefined ? {} : { onEpoch: options.onEpoch }),
    ...(options.signal === undefined ? {} : { signal: options.signal }),
    ...(options.now === undefined ? {} : { now: options.now }),
  });
  const guard = buildGuardReference(data, { seed: hyperParameters.seed });
  const driftReference = buildDriftReference(trained, data);
  const records = rows.counts();
  const attachments = fitAttachments({
    featureCodec: codec.toJSON(),
    avroSchema: JSON.stringify(input.schema),
    schemaFingerprint: fingerprint,
    labelPath: input.labelPath,
    records,
    driftReference,
  });
  return {
    bundle: { trained, guard, attachments },
    codec,
    schemaFingerprint: fingerprint,
    records,
    backend,
    dispose: () => trained.network.dispose(),
  };
}

/** Encodes records into growing row-major chunks and counts what was skipped. */
class RowCollector {
  private static readonly CHUNK_ROWS = 8192;
  private readonly chunks: Float32Array[] = [];
  private readonly classes: number[] = [];
  private current: Float32Array;
  private used = 0;
  private read = 0;
  private missingLabel = 0;
  private unknownLabel = 0;

  constructor(private readonly codec: FeatureCodec) {
    this.current = new Float32Array(RowCollector.CHUNK_ROWS * codec.width);
  }

  add(record: AvroRecord): void {
    this.read++;
    const classIndex = this.codec.classIndexOf(record);
    if (classIndex < 0) {
      if (this.codec.classOf(record) === null) this.missingLabel++;
      else this.unknownLabel++;
      return;
    }
    if (this.used === RowCollector.CHUNK_ROWS) {
      this.chunks.push(this.current);
      this.current = new Float32Array(RowCollector.CHUNK_ROWS * this.codec.width);
      this.used = 0;
    }
    this.codec.encode(record, this.current, this.used++);
    this.classes.push(classIndex);
  }

  trainingData(): TrainingData {
    const width = this.codec.width;
    const features = new Float32Array(this.classes.length * width);
    let offset = 0;
    for (const chunk of this.chunks) {
      features.set(chunk, offset);
      offset += chunk.length;
    }
    features.set(this.current.subarray(0, this.used * width), offset);
    return { width, features, classes: Int32Array.from(this.classes), classNames: this.codec.classes };
  }

  counts(): FitRecordCounts {
    const perClass: Record<string, number> = Object.fromEntries(this.codec.classes.map((name) => [name, 0]));
    for (const classIndex of this.classes) perClass[this.codec.classes[classIndex]!]! += 1;
    return { read: this.read, trained: this.classes.length, missingLabel: this.missingLabel, unknownLabel: this.unknownLabel, perClass };
  }
}

function toAsyncIterator<T>(records: Iterable<T> | AsyncIterable<T>): AsyncIterator<T> | Iterator<T> {
  return Symbol.asyncIterator in records ? records[Symbol.asyncIterator]() : records[Symbol.iterator]();
}

