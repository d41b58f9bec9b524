/**
 * The identity of one source partition. Balance state is kept per partition and source positions are
 * committed per partition, so both the controller and the source/sink interfaces name partitions this way.
 * A file source uses the file name as `topic` and the file's index (usually 0) as `partition`.
 */
export interface TopicPartition {
  readonly topic: string;
  readonly partition: number;
}

/**
 * A map key for a partition. Kafka topic names use only `[a-zA-Z0-9._-]`, so the separator cannot occur
 * in one; file names might contain it, but then the partition number after the last separator still
 * keeps keys distinct.
 */
export function partitionKey(partition: TopicPartition): string {
  return `${partition.topic}\u0000${partition.partition}`;
}

/** Orders partitions by topic, then number: the fixed order in which counts are summed. */
export function comparePartitions(a: TopicPartition, b: TopicPartition): number {
  if (a.topic !== b.topic) return a.topic < b.topic ? -1 : 1;
  return a.partition - b.partition;
}

/** `orders:3`, for messages. */
export function describePartition(partition: TopicPartition): string {
  return `${partition.topic}:${partition.partition}`;
}
