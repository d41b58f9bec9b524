import type { TopicPartition } from '../pipeline/topic-partition.js';

/**
 * A map keyed by (topic, partition) without building a string key per lookup: the consume path looks
 * partitions up once per message.
 */
export class PartitionMap<V> {
  private readonly byTopic = new Map<string, Map<number, V>>();

  get(topic: string, partition: number): V | undefined {
    return this.byTopic.get(topic)?.get(partition);
  }

  has(topic: string, partition: number): boolean {
    return this.byTopic.get(topic)?.has(partition) ?? false;
  }

  set(topic: string, partition: number, value: V): void {
    let partitions = this.byTopic.get(topic);
    if (partitions === undefined) this.byTopic.set(topic, (partitions = new Map()));
    partitions.set(partition, value);
  }

  delete(topic: string, partition: number): void {
    const partitions = this.byTopic.get(topic);
    partitions?.delete(partition);
    if (partitions?.size === 0) this.byTopic.delete(topic);
  }

  clear(): void {
    this.byTopic.clear();
  }

  get size(): number {
    let size = 0;
    for (const partitions of this.byTopic.values()) size += partitions.size;
    return size;
  }

  *entries(): IterableIterator<[TopicPartition, V]> {
    for (const [topic, partitions] of this.byTopic) {
      for (const [partition, value] of partitions) yield [{ topic, partition }, value];
    }
  }

  keys(): TopicPartition[] {
    return [...this.entries()].map(([partition]) => partition);
  }
}
