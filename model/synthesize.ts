/**
 * Synthetic records from a trained model: for each source record, k draws from the posterior
 * around it (`samplePosterior`), decoded by the feature codec with the source for copied fields,
 * then checked — valid per the schema, and through the privacy guard on the re-encoded decode, so
 * a copy produced by rounding or by categories is still caught. Dropped decodes are counted.
 *
 * Deterministic: the latent and likelihood draws of variant i come from
 * `streamFor(seed, modelId, key, i)`, and `fresh` fields from `streamFor(seed, modelId + FRESH_STREAM_SUFFIX,
 * key, i)`, a separate stream so a new identifier never shifts the model's draws.
 */
import type { AvroRecord } from './features/avro-types.js';
import { recordStreams, type RecordKey, type Seed } from './random.js';
import type { TrainedModel } from './trained-model.js';
import { DEFAULT_PRIVACY_GUARD, applyPrivacyGuard, type GuardCandidate, type GuardCounts, type PrivacyGuardOptions } from './vae/guard.js';
import { samplePosterior, type SourceRow } from './vae/sampler.js';

/** Appended to the model id to key the random streams of `fresh` fields. */
export const FRESH_STREAM_SUFFIX = '/fresh';

export interface SynthesisSource {
  readonly record: AvroRecord;
  /** The record's class; a class the model was not fitted on yields nothing (counted). */
  readonly className: string;
  /** Where the record sits: keys its random streams and its provenance. */
  readonly key: RecordKey;
  /** Variants to draw (0 is allowed). */
  readonly k: number;
  /** Index of the first variant, to regenerate variant i alone. @default 0 */
  readonly firstSampleIndex?: number;
}

export interface SynthesisOptions {
  /** τ ≥ 0: 1 samples the model as trained, towards 0 decodes approach the reconstruction. */
  readonly temperature: number;
  readonly seed: Seed;
  /** @default DEFAULT_PRIVACY_GUARD (scope source, min distance 0.05) */
  readonly privacyGuard?: PrivacyGuardOptions;
}

export interface SyntheticRecord {
  /** Index of the source in the input list. */
  readonly sourceIndex: number;
  readonly sampleIndex: number;
  readonly record: AvroRecord;
}

export interface SynthesisCounts extends GuardCounts {
  /** Variants asked for, over sources of known classes. */
  readonly requested: number;
  /** Sources skipped because the model does not know their class. */
  readonly unknownClass: number;
  /** Decodes dropped because they are not valid per the schema (never expected; counted, not hidden). */
  readonly invalid: number;
  /** `invalid` by source: entry i counts the dropped decodes of `sources[i]`. */
  readonly invalidBySource: readonly number[];
}

export interface SynthesisResult {
  /** Kept records, by source then sample index. */
  readonly records: SyntheticRecord[];
  readonly counts: SynthesisCounts;
}

export function synthesize(model: TrainedModel, sources: readonly SynthesisSource[], options: SynthesisOptions): SynthesisResult {
  const { codec, vae } = model;
  const classIndex = new Map(model.classNames.map((name, index) => [name, index]));
  let unknownClass = 0;
  const known: { source: SynthesisSource; sourceIndex: number; row: SourceRow }[] = [];
  sources.forEach((source, sourceIndex) => {
    const index = classIndex.get(source.className);
    if (index === undefined) {
      unknownClass++;
      return;
    }
    const row: SourceRow = { features: codec.encode(source.record), classIndex: index, key: source.key, k: source.k };
    known.push({ source, sourceIndex, row: source.firstSampleIndex === undefined ? row : { ...row, firstSampleIndex: source.firstSampleIndex } });
  });
  const samples = samplePosterior(vae, known.map(({ row }) => row), { temperature: options.temperature, seed: options.seed });

  const decoded: (SyntheticRecord & GuardCandidate)[] = [];
  let requested = 0;
  const invalidBySource = sources.map(() => 0);
  known.forEach(({ source, sourceIndex, row }, r) => {
    requested += row.k;
    const freshStreams = recordStreams(options.seed, `${model.id}${FRESH_STREAM_SUFFIX}`, source.key);
    for (const sample of samples[r]!) {
      const fresh = freshStreams.sample(sample.sampleIndex);
      const record = codec.decode(sample.features, source.record, { random: () => fresh.uniform() });
      if (!model.schemaType.isValid(record)) {
        invalidBySource[sourceIndex]!++;
        continue;
      }
      decoded.push({ sourceIndex, sampleIndex: sample.sampleIndex, record, features: codec.encode(record), classIndex: row.classIndex, source: row.features });
    }
  });
  const guard = applyPrivacyGuard(vae.guard, decoded, options.privacyGuard ?? DEFAULT_PRIVACY_GUARD);
  const records = decoded
    .filter((_, i) => guard.keep[i])
    .map(({ sourceIndex, sampleIndex, record }) => ({ sourceIndex, sampleIndex, record }));
  const invalid = invalidBySource.reduce((sum, count) => sum + count, 0);
  return { records, counts: { ...guard.counts, requested, unknownClass, invalid, invalidBySource } };
}
