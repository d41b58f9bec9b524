/**
 * A topic snapshot read partition after partition, in batches of exactly the size asked for (the last
 * one excepted), so a replay of a topic is deterministic: the records reach the pipeline as partition 0
 * in offset order, then partition 1, and so on — whatever order the broker's fetches interleave them in.
 *
 * Why: the balance controller sums the counts of all partitions it owns, so the plan of each record depends
 * on the records before it across partitions, and a file sink closes one block per batch. One consumer over
 * all partitions hands them over interleaved as fetches complete, which varies from run to run.
 *
 * One bounded `KafkaSnapshotSource` per partition, all opened together at start so every partition's
 * end offset is taken at (nearly) the same moment; those not yet being read only prefetch.
 */
import { RaretideError } from '../../../config/errors.js';
import type { KafkaConfig } from '../../../config/schema.js';
import { KafkaAdmin } from '../../kafka/admin.js';
import { KafkaSnapshotSource, type SnapshotStart } from '../../kafka/snapshot-source.js';
import type { AssignmentListener, BatchSource, InputMessage } from '../../pipeline/source-sink.js';

export interface PartitionOrderedOptions {
  readonly kafka: KafkaConfig;
  readonly topic: string;
  /** @default { from: 'earliest' } */
  readonly start?: SnapshotStart;
}

export class PartitionOrderedSource implements BatchSource {
  /** Records handed over so far. */
  recordsRead = 0;
  private current = 0;
  private paused = false;
  private announcement: Promise<void> = Promise.resolve();

  private constructor(
    readonly topic: string,
    /** One source per partition, in partition order. */
    private readonly parts: readonly KafkaSnapshotSource[],
  ) {}

  static async open(options: PartitionOrderedOptions): Promise<PartitionOrderedSource> {
    const admin = await KafkaAdmin.connect(options.kafka);
    let count: number | undefined;
    try {
      count = await admin.partitionCount(options.topic);
    } finally {
      await admin.close();
    }
    if (count === undefined || count === 0) {
      throw new RaretideError('kafka.unknown-topic', `topic ${options.topic} does not exist on ${options.kafka.brokers}: create it, or correct source.topic in the config`, { retriable: false });
    }
    const opening = Array.from({ length: count }, (_, partition) =>
      KafkaSnapshotSource.open({ kafka: options.kafka, topic: options.topic, partitions: [partition], purpose: 'replay', ...(options.start === undefined ? {} : { start: options.start }) }));
    const settled = await Promise.allSettled(opening);
    const opened = settled.flatMap((result) => (result.status === 'fulfilled' ? [result.value] : []));
    const failed = settled.find((result) => result.status === 'rejected');
    if (failed !== undefined) {
      await Promise.allSettled(opened.map((part) => part.close()));
      throw failed.reason;
    }
    return new PartitionOrderedSource(options.topic, opened);
  }

  /** Records in the snapshot: the sum of span lengths (an upper bound under read_committed). */
  get expectedRecords(): bigint {
    return this.parts.reduce((sum, part) => sum + part.expectedRecords, 0n);
  }

  async nextBatch(maxMessages: number): Promise<readonly InputMessage[] | null> {
    await this.announcement;
    if (this.paused) return [];
    const batch: InputMessage[] = [];
    while (batch.length < maxMessages && this.current < this.parts.length) {
      const part = this.parts[this.current]!;
      const got = await part.nextBatch(maxMessages - batch.length);
      if (got === null) {
        await part.close();
        this.current += 1;
        continue;
      }
      for (const message of got) batch.push(message);
    }
    this.recordsRead += batch.length;
    return batch.length === 0 ? null : batch;
  }

  pause(): void {
    this.paused = true;
  }

  resume(): void {
    this.paused = false;
  }

  /** Every partition is announced once, before the first batch (nothing is revoked in a replay). */
  onAssignment(listener: AssignmentListener): void {
    this.announcement = listener.assigned(this.parts.map((_, partition) => ({ topic: this.topic, partition })));
  }

  async close(): Promise<void> {
    const results = await Promise.allSettled(this.parts.map((part) => part.close()));
    const failed = results.find((result) => result.status === 'rejected');
    if (failed !== undefined) throw failed.reason;
  }
}
