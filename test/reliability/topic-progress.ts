/**
 * Cheap progress readings for wait conditions polled many times a second: one long-lived client asks
 * for high watermarks (records written, open and aborted transactions included, as in
 * test/support/spawned-worker.ts `recordsWritten`) and for a group's committed offsets, instead of a
 * new client per reading.
 */
import type { KafkaConsumer } from 'node-rdkafka';

import { connectConsumer, disconnect } from '../support/kafka-clients.js';
import { uniqueName } from '../support/topics.js';
import type { CleanupStack } from './cleanup-stack.js';

export class TopicProgress {
  private constructor(
    private readonly watermarkReader: KafkaConsumer,
    private readonly brokers: string,
    private readonly groupReaders: Map<string, KafkaConsumer>,
  ) {}

  static async open(brokers: string, cleanup: CleanupStack): Promise<TopicProgress> {
    const reader = await connectConsumer({ 'metadata.broker.list': brokers, 'group.id': uniqueName('reliability-hw'), 'isolation.level': 'read_uncommitted' });
    const progress = new TopicProgress(reader, brokers, new Map());
    cleanup.defer('progress readers', () => progress.close());
    return progress;
  }

  /**
   * Records in `topic` (sum of high watermarks). Ask only about topics that exist: librdkafka remembers
   * a topic it was told is unknown, and this long-lived client would read 0 for it long after.
   */
  async written(topic: string, partitions: number): Promise<number> {
    let total = 0;
    for (let partition = 0; partition < partitions; partition++) {
      total += await new Promise<number>((resolve) => {
        this.watermarkReader.queryWatermarkOffsets(topic, partition, 5_000, (error, offsets) => resolve(error ? 0 : offsets.highOffset));
      });
    }
    return total;
  }

  /**
   * Sum over partitions of `group`'s committed offsets on `topic` (partitions without one count 0), or
   * undefined when the broker gives no answer now: while offsets sent to an open transaction are pending
   * it holds the answer back (KIP-447's stable offset fetch, e.g. until a killed exactly-once worker's
   * successor aborts what it left open), and right after a broker restart it is not yet coordinator.
   * A wait on this condition ends at its deadline if no answer ever comes.
   */
  async committed(group: string, topic: string, partitions: number): Promise<number | undefined> {
    const reader = await this.groupReader(group);
    const asked = Array.from({ length: partitions }, (_, partition) => ({ topic, partition }));
    const answer = await new Promise<{ partition: number; offset: number }[] | undefined>((resolve) => {
      reader.committed(asked, 5_000, (error, offsets) => resolve(error ? undefined : offsets));
    });
    // A partition without a committed offset answers a negative sentinel.
    return answer?.reduce((sum, { offset }) => sum + (Number.isFinite(offset) && offset > 0 ? offset : 0), 0);
  }

  async close(): Promise<void> {
    const readers = [this.watermarkReader, ...this.groupReaders.values()];
    this.groupReaders.clear();
    await Promise.all(readers.map((reader) => disconnect(reader).catch(() => undefined)));
  }

  /** A non-member client of the group (never subscribes, never commits): asking does not join it. */
  private async groupReader(group: string): Promise<KafkaConsumer> {
    let reader = this.groupReaders.get(group);
    if (reader === undefined) {
      reader = await connectConsumer({ 'metadata.broker.list': this.brokers, 'group.id': group });
      this.groupReaders.set(group, reader);
    }
    return reader;
  }
}
