/**
 * What the pipeline core needs from a model: synthetic variants of a batch of rare records, made in one
 * call. The core knows nothing of features, tensors or guards; `model-synthesizer.ts` adapts the
 * trained conditional VAE to this, and tests use a deterministic fake.
 */
import type { SourceOffset } from './source-sink.js';

/** A decoded Avro record in the reader schema's shape. */
export type RecordValue = Readonly<Record<string, unknown>>;

/** One rare record to make `k` variants of. */
export interface SynthesisRequest {
  readonly record: RecordValue;
  /** Its class; one of `Synthesizer.classes`. */
  readonly label: string;
  /** Where it sits: keys the random streams, so a variant depends on its own record alone. */
  readonly key: SourceOffset;
  /** Variants wanted (≥ 1). */
  readonly k: number;
}

export interface SynthesisOptions {
  /** Latent noise scale (> 0). */
  readonly temperature: number;
  readonly seed: number | bigint;
}

/** A variant that passed the model's own guard. */
export interface SyntheticVariant {
  /** Which of the request's k variants this is (0 … k−1); gaps where the guard dropped one. */
  readonly sampleIndex: number;
  readonly record: RecordValue;
}

/** Variants the model's guard dropped, by reason (never silently). */
export interface ModelGuardCounts {
  /** Identical to a training record or to the source record. */
  readonly exactCopies: number;
  /** Too close to the source record. */
  readonly nearSource: number;
  /** Too close to a training record of the class. */
  readonly nearClassRow: number;
  /** Not valid under the record schema (decodes should always be; counted, not hidden). */
  readonly invalid: number;
}

export interface SynthesisResult {
  /** Per request, in request order: the kept variants in sample-index order. */
  readonly variants: readonly (readonly SyntheticVariant[])[];
  readonly dropped: ModelGuardCounts;
  /** `dropped.invalid` by class of the request; absent when the synthesizer cannot tell (counted as guard drops then). */
  readonly invalidByClass?: Readonly<Record<string, number>>;
}

export interface Synthesizer {
  /** Id of the model (its content hash), written into provenance. */
  readonly modelId: string;
  /** The classes the model can make records of; a record of any other class cannot be served. */
  readonly classes: readonly string[];
  synthesize(requests: readonly SynthesisRequest[], options: SynthesisOptions): SynthesisResult | Promise<SynthesisResult>;
}

export const NO_GUARD_DROPS: ModelGuardCounts = Object.freeze({ exactCopies: 0, nearSource: 0, nearClassRow: 0, invalid: 0 });
