import { RaretideError } from '../../config/errors.js';
import type { Framing } from '../avro/framing.js';
import type { SyntheticVariant } from './synthesizer.js';

/** A synthetic record that passed every guard, framed for the output. */
export interface FramedVariant {
  readonly sampleIndex: number;
  readonly payload: Buffer;
}

export interface GuardOutcome {
  /** Per batch entry, in sample-index order. */
  readonly framed: readonly (readonly FramedVariant[])[];
  /** Variants dropped because the output schema refuses them. */
  readonly invalid: number;
}

/**
 * The schema check on synthetic records: each is encoded with the output framing, whose encoder checks
 * it against the output schema first (avsc `isValid`, record-encoding.ts); one the schema refuses is
 * dropped and counted, not written. Checking and encoding in one step costs one validation per record.
 */
export function guardStage(framing: Framing, variants: readonly (readonly SyntheticVariant[])[]): GuardOutcome {
  let invalid = 0;
  const framed = variants.map((entryVariants) => {
    const kept: FramedVariant[] = [];
    for (const variant of entryVariants) {
      try {
        kept.push({ sampleIndex: variant.sampleIndex, payload: framing.frame(variant.record) });
      } catch (error) {
        if (!(error instanceof RaretideError && error.code === 'avro.invalid-record')) throw error;
        invalid += 1;
      }
    }
    return kept;
  });
  return { framed, invalid };
}
