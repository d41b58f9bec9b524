import type { KafkaConsumer, LibrdKafkaError, TopicPartitionOffset } from 'node-rdkafka';

import type { RaretideError } from '../../config/errors.js';
import type { TopicPartition } from '../pipeline/topic-partition.js';
import { toKafkaError } from './kafka-errors.js';
import { PartitionMap } from './partition-map.js';

/** librdkafka's ERR__NO_OFFSET: nothing to commit, which is no failure. */
const ERR_NO_OFFSET = -168;

/**
 * The group's offset commits, sent without waiting. librdkafka answers an asynchronous `commit` through
 * `offset_commit_cb`, which it serves only inside a consumer poll — in node-rdkafka, inside the next
 * `consume` call (NODE-RDKAFKA.md, "Consumption"). So a checkpoint sends its commit and returns; the
 * answer arrives while the next batch is read, confirms the offsets, or is kept as a failure that the
 * next checkpoint raises. That is safe for at-least-once: an unconfirmed commit only means records may be
 * read again. Where a commit must be durable before going on — partitions about to be revoked, shutdown —
 * `commitOutstandingSync` repeats the outstanding offsets with a blocking `commitSync` (one round trip).
 */
export class GroupCommits {
  /** Offsets sent and not yet confirmed. */
  private readonly outstanding = new PartitionMap<number>();
  private failure: RaretideError | undefined;

  constructor(private readonly consumer: KafkaConsumer) {
    consumer.on('offset.commit', (error: LibrdKafkaError | undefined, offsets: TopicPartitionOffset[]) => this.answered(error, offsets));
  }

  /** Sends a commit; throws only when librdkafka refuses it at once. */
  send(offsets: readonly TopicPartitionOffset[]): void {
    if (offsets.length === 0) return;
    try {
      this.consumer.commit([...offsets]);
    } catch (error) {
      throw toKafkaError('offset commit', error);
    }
    for (const { topic, partition, offset } of offsets) this.outstanding.set(topic, partition, offset);
  }

  /** The failure answered since the last call, if any (then forgotten: it is raised once). */
  takeFailure(): RaretideError | undefined {
    const failure = this.failure;
    this.failure = undefined;
    return failure;
  }

  /** Commits the outstanding offsets of `partitions` (all when omitted) synchronously; throws on failure. */
  commitOutstandingSync(partitions?: readonly TopicPartition[]): void {
    const wanted = partitions ?? this.outstanding.keys();
    const offsets = wanted.flatMap(({ topic, partition }) => {
      const offset = this.outstanding.get(topic, partition);
      return offset === undefined ? [] : [{ topic, partition, offset }];
    });
    if (offsets.length === 0) return;
    try {
      this.consumer.commitSync(offsets);
    } catch (error) {
      throw toKafkaError('offset commit', error);
    }
    for (const { topic, partition, offset } of offsets) this.confirm(topic, partition, offset);
  }

  /** Forgets outstanding offsets of partitions that left this member. */
  forget(partitions: readonly TopicPartition[]): void {
    for (const { topic, partition } of partitions) this.outstanding.delete(topic, partition);
  }

  private answered(error: LibrdKafkaError | undefined, offsets: readonly TopicPartitionOffset[]): void {
    if (error !== undefined && error !== null && error.code !== ERR_NO_OFFSET) {
      const partitions = offsets.map(({ topic, partition, offset }) => `${topic}:${partition}@${offset}`).join(', ');
      this.failure ??= toKafkaError(`offset commit (${partitions})`, error);
      return;
    }
    for (const { topic, partition, offset } of offsets) {
      if (typeof offset === 'number' && offset >= 0) this.confirm(topic, partition, offset);
    }
  }

  private confirm(topic: string, partition: number, offset: number): void {
    if (this.outstanding.get(topic, partition) === offset) this.outstanding.delete(topic, partition);
  }
}
