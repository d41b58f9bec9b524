/**
 * Balance counts persisted in a compacted topic: one record per source partition, key
 * `<source topic>/<partition>`, value the JSON of `encodeBalanceState`. Compaction keeps the latest value
 * per key; a reader takes the last one it sees per key, which is the latest because one key always hashes
 * to the same state-topic partition. In exactly-once mode the records are written inside each batch's
 * transaction, so a read_committed reader sees the counts that belong to the committed offsets.
 */
import { RaretideError } from '../../config/errors.js';
import type { KafkaConfig } from '../../config/schema.js';
import { decodeBalanceState, encodeBalanceState, type PartitionBalanceState } from '../pipeline/balance-state.js';
import { describePartition, type TopicPartition } from '../pipeline/topic-partition.js';
import type { ClientSettings } from './client-settings.js';
import { KafkaSnapshotSource } from './snapshot-source.js';

/** Topic-level configs of a state topic created by raretide. */
export const STATE_TOPIC_CONFIG: Readonly<Record<string, string>> = {
  'cleanup.policy': 'compact',
  // Records of a partition are rewritten every batch; compact them soon after they are superseded.
  'min.cleanable.dirty.ratio': '0.1',
  'segment.ms': '3600000',
};

export function stateRecordKey(partition: TopicPartition): string {
  return `${partition.topic}/${partition.partition}`;
}

export interface StateRecord {
  readonly key: string;
  /** The encoded state, or null for a tombstone (no state). */
  readonly value: Buffer | null;
}

export function stateRecords(states: readonly PartitionBalanceState[]): StateRecord[] {
  return states.map((state) => ({ key: stateRecordKey(state), value: encodeState(state) }));
}

function encodeState(state: PartitionBalanceState): Buffer {
  return Buffer.from(encodeBalanceState(state), 'utf8');
}

/**
 * The state records an at-least-once sink has made durable, so that state written in the same flush as
 * a checkpoint's outputs can be taken back when some of those outputs failed: `rollback` gives the
 * records that restore each such key to its last durable value (a tombstone where none is known). Then
 * the persisted state never runs ahead of the committed positions, except across a crash — the same
 * window as a crash between writing state and committing.
 */
export class StateRollback {
  private readonly durable = new Map<string, Buffer | null>();
  private readonly pending = new Map<string, Buffer | null>();

  /** States read by `loadBalanceStates` are durable by definition. */
  loaded(partitions: readonly TopicPartition[], states: readonly (PartitionBalanceState | undefined)[]): void {
    partitions.forEach((partition, index) => {
      const state = states[index];
      this.durable.set(stateRecordKey(partition), state === undefined ? null : encodeState(state));
    });
  }

  /** Records sent and not yet known to be delivered. */
  sent(records: readonly StateRecord[]): void {
    for (const { key, value } of records) this.pending.set(key, value);
  }

  /** Everything sent since the last `delivered` or `rollback` was delivered. */
  delivered(): void {
    for (const [key, value] of this.pending) this.durable.set(key, value);
    this.pending.clear();
  }

  /** Records restoring every pending key to its last durable value; forgets the pending keys. */
  rollback(): StateRecord[] {
    const records = [...this.pending.keys()].map((key) => ({ key, value: this.durable.get(key) ?? null }));
    this.pending.clear();
    return records;
  }
}

export interface LoadStateOptions {
  readonly kafka: KafkaConfig;
  readonly stateTopic: string;
  readonly partitions: readonly TopicPartition[];
  /** Records asked per read. @default 1000 */
  readonly batchSize?: number;
  readonly settings?: ClientSettings;
}

/**
 * The latest persisted state of each of `partitions` (undefined where none, or where the last record is
 * a tombstone), in the order asked. Reads the whole state topic up to its end offsets at the time of the
 * call. A record that does not decode stops the load: guessing counts would silently unbalance the output.
 */
export async function loadBalanceStates(options: LoadStateOptions): Promise<(PartitionBalanceState | undefined)[]> {
  if (options.partitions.length === 0) return [];
  const wanted = new Set(options.partitions.map(stateRecordKey));
  const latest = new Map<string, { value: Buffer | null; where: string }>();
  const source = await KafkaSnapshotSource.open({ kafka: options.kafka, topic: options.stateTopic, purpose: 'state-reader', settings: options.settings });
  try {
    for (;;) {
      const batch = await source.nextBatch(options.batchSize ?? 1_000);
      if (batch === null) break;
      for (const record of batch) {
        const key = record.key?.toString('utf8');
        if (key === undefined || !wanted.has(key)) continue;
        latest.set(key, { value: record.value.length === 0 ? null : record.value, where: `${describePartition(record)} offset ${record.offset}` });
      }
    }
  } finally {
    await source.close();
  }
  return options.partitions.map((partition) => {
    const key = stateRecordKey(partition);
    const found = latest.get(key);
    if (found === undefined || found.value === null) return undefined;
    const decoded = decodeBalanceState(found.value.toString('utf8'));
    if (!decoded.ok) {
      throw new RaretideError('kafka.state-corrupt', `balance state of ${describePartition(partition)} in ${options.stateTopic} (key ${key}, ${found.where}) is unreadable: ${decoded.problem.reason}; write a valid state or a tombstone for that key`, { retriable: false });
    }
    if (decoded.value.topic !== partition.topic || decoded.value.partition !== partition.partition) {
      throw new RaretideError('kafka.state-corrupt', `balance state under key ${key} in ${options.stateTopic} (${found.where}) names ${describePartition(decoded.value)}; write the state of ${describePartition(partition)} under that key, or a tombstone`, { retriable: false });
    }
    return decoded.value;
  });
}
