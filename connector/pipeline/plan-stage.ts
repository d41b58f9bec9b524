import type { BalanceController, BalanceRecord, GrantSynthetic, RecordPlan } from './balance.js';
import type { DecodedEntry } from './decode-stage.js';
import type { TokenBucket } from './rate-limit.js';

/**
 * Plans k for every labelled record of a batch (rejected entries get none), in batch order. With a
 * thinning bucket (rate cap policy `thin`), each record's k is lowered to the tokens there are, and the
 * balance counts see only what is granted. The `wait` policy is not the core's business: the runner
 * holds the batch's outputs back until tokens return.
 */
export function planStage(balance: BalanceController, entries: readonly DecodedEntry[], thinning: TokenBucket | undefined): (RecordPlan | undefined)[] {
  const records: BalanceRecord[] = [];
  const positions: number[] = [];
  entries.forEach((entry, index) => {
    if (entry.kind !== 'record') return;
    const { topic, partition, offset } = entry.message;
    records.push({ topic, partition, offset, label: entry.label });
    positions.push(index);
  });
  const grant: GrantSynthetic | undefined = thinning === undefined ? undefined : (wanted) => thinning.thin(wanted).granted;
  const plans = balance.planBatch(records, grant);
  const byEntry = new Array<RecordPlan | undefined>(entries.length).fill(undefined);
  positions.forEach((position, index) => {
    byEntry[position] = plans[index];
  });
  return byEntry;
}

/** The balance record of a planned entry, for `recordShortfall`. */
export function balanceRecordOf(entry: Extract<DecodedEntry, { kind: 'record' }>): BalanceRecord {
  const { topic, partition, offset } = entry.message;
  return { topic, partition, offset, label: entry.label };
}
