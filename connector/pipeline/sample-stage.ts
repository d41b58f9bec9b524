import { RaretideError } from '../../config/errors.js';
import type { RecordPlan } from './balance.js';
import type { DecodedEntry } from './decode-stage.js';
import type { Clock } from './rate-limit.js';
import { NO_GUARD_DROPS, type ModelGuardCounts, type SynthesisOptions, type SynthesisRequest, type Synthesizer, type SyntheticVariant } from './synthesizer.js';

export interface SampleOutcome {
  /** Per batch entry: the variants the model kept (none for records with k = 0 and dead letters). */
  readonly variants: readonly (readonly SyntheticVariant[])[];
  readonly dropped: ModelGuardCounts;
  /** `dropped.invalid` by class, when the synthesizer tells (see `SynthesisResult`). */
  readonly invalidByClass: Readonly<Record<string, number>> | undefined;
  /** Rows sent to the model. */
  readonly rows: number;
  readonly elapsedMs: number;
}

const NONE: readonly SyntheticVariant[] = Object.freeze([]);

/** One model call for every record of the batch with k > 0; none when there is no such record. */
export async function sampleStage(
  synthesizer: Synthesizer,
  entries: readonly DecodedEntry[],
  plans: readonly (RecordPlan | undefined)[],
  options: SynthesisOptions,
  clock: Clock,
): Promise<SampleOutcome> {
  const requests: SynthesisRequest[] = [];
  const positions: number[] = [];
  entries.forEach((entry, index) => {
    const k = plans[index]?.k ?? 0;
    if (entry.kind !== 'record' || k === 0) return;
    const { topic, partition, offset } = entry.message;
    requests.push({ record: entry.record, label: entry.label, key: { topic, partition, offset }, k });
    positions.push(index);
  });
  const variants: (readonly SyntheticVariant[])[] = entries.map(() => NONE);
  if (requests.length === 0) return { variants, dropped: NO_GUARD_DROPS, invalidByClass: undefined, rows: 0, elapsedMs: 0 };

  const started = clock.now();
  const result = await synthesizer.synthesize(requests, options);
  const elapsedMs = clock.now() - started;
  if (result.variants.length !== requests.length) {
    throw new RaretideError('pipeline.synthesizer-contract', `Model ${synthesizer.modelId} answered ${result.variants.length} rows for ${requests.length} requests.`);
  }
  result.variants.forEach((rowVariants, row) => {
    checkVariants(rowVariants, requests[row]!.k, synthesizer.modelId);
    variants[positions[row]!] = rowVariants;
  });
  return { variants, dropped: result.dropped, invalidByClass: result.invalidByClass, rows: requests.length, elapsedMs };
}

/** Sample indices must rise within 0…k−1: provenance and output order depend on it. */
function checkVariants(variants: readonly SyntheticVariant[], k: number, modelId: string): void {
  let previous = -1;
  for (const { sampleIndex } of variants) {
    if (!Number.isInteger(sampleIndex) || sampleIndex <= previous || sampleIndex >= k) {
      throw new RaretideError(
        'pipeline.synthesizer-contract',
        `Model ${modelId} returned sample index ${sampleIndex} after ${previous} for a request of k = ${k}; indices must rise within 0…${k - 1}.`,
      );
    }
    previous = sampleIndex;
  }
}
