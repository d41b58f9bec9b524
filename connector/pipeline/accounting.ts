/**
 * What one batch did, per class and in total: the figures behind metrics, progress lines and the replay
 * summary. Every source record is accounted for exactly once: as consumed (of its class) or dead-lettered
 * (by reason); every synthetic record the plan asked for is emitted or dropped by a guard.
 */
import type { DeadLetterCode } from './dead-letter.js';
import type { ModelGuardCounts } from './synthesizer.js';

export interface ClassTally {
  /** Source records of this class, decoded and labelled. */
  consumed: number;
  /** Synthetic records planned (after thinning): emitted + guardDropped. */
  planned: number;
  /** Synthetic records the balance wanted but the rate cap (`thin`) refused. */
  thinned: number;
  /** Synthetic records emitted. */
  synthetic: number;
  /** Synthetic records planned but dropped by the privacy guard or a schema check. */
  guardDropped: number;
  /**
   * Of `guardDropped`, those a schema refused: the model's decode invalid under the record schema, or a
   * record the output schema refuses. The rest were too close to a real record.
   */
  invalid: number;
  /** Source records of this class passed through to the output. */
  originalsEmitted: number;
}

/**
 * Guard drops by reason: the model's privacy guard, and records the record or output schema refuses
 * (`invalid` adds the model's own schema check to the output framing's).
 */
export type GuardDrops = ModelGuardCounts;

export interface BatchAccounting {
  /** Source messages in the batch. */
  readonly records: number;
  readonly byClass: Readonly<Record<string, ClassTally>>;
  readonly deadLetters: Readonly<Partial<Record<DeadLetterCode, number>>>;
  readonly guardDrops: GuardDrops;
  /** Rows sent to the model (records with k > 0) and the time the call took. */
  readonly modelRows: number;
  readonly modelMs: number;
}

export function emptyTally(): ClassTally {
  return { consumed: 0, planned: 0, thinned: 0, synthetic: 0, guardDropped: 0, invalid: 0, originalsEmitted: 0 };
}

export const NO_DROPS: GuardDrops = Object.freeze({ exactCopies: 0, nearSource: 0, nearClassRow: 0, invalid: 0 });

/** Running totals over batches: what the metrics layer and the summaries read. */
export class PipelineCounters {
  records = 0;
  batches = 0;
  checkpoints = 0;
  modelRows = 0;
  modelMs = 0;
  /** Time spent waiting for rate-cap tokens (policy `wait`). */
  rateWaitMs = 0;
  readonly byClass = new Map<string, ClassTally>();
  readonly deadLetters = new Map<DeadLetterCode, number>();
  guardDrops: GuardDrops = NO_DROPS;

  add(batch: BatchAccounting): void {
    this.records += batch.records;
    this.batches += 1;
    this.modelRows += batch.modelRows;
    this.modelMs += batch.modelMs;
    for (const [label, tally] of Object.entries(batch.byClass)) {
      const total = this.byClass.get(label) ?? emptyTally();
      for (const field of Object.keys(tally) as (keyof ClassTally)[]) total[field] += tally[field];
      this.byClass.set(label, total);
    }
    for (const [code, count] of Object.entries(batch.deadLetters) as [DeadLetterCode, number][]) {
      this.deadLetters.set(code, (this.deadLetters.get(code) ?? 0) + count);
    }
    this.guardDrops = addDrops(this.guardDrops, batch.guardDrops);
  }

  /** Σ over classes of one tally field. */
  total(field: keyof ClassTally): number {
    let sum = 0;
    for (const tally of this.byClass.values()) sum += tally[field];
    return sum;
  }

  deadLettered(): number {
    let sum = 0;
    for (const count of this.deadLetters.values()) sum += count;
    return sum;
  }
}

export function addDrops(a: GuardDrops, b: GuardDrops): GuardDrops {
  return {
    exactCopies: a.exactCopies + b.exactCopies,
    nearSource: a.nearSource + b.nearSource,
    nearClassRow: a.nearClassRow + b.nearClassRow,
    invalid: a.invalid + b.invalid,
  };
}
