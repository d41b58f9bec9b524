/**
 * The topic sink of `replay`: the worker's producer sink, with the live worker's bookkeeping left out.
 * A replay starts its balance counts from zero and keeps them to itself — it neither loads nor writes
 * balance state (a state topic shared with a live worker would be corrupted) and commits no positions, so
 * a checkpoint is a flush plus "was everything delivered". Delivery is at-least-once; a failed checkpoint
 * ends the replay, leaving the batches delivered before it in the topic.
 *
 * Partitions: the producer places each record by its key (librdkafka's default partitioner), and a
 * synthetic record keeps its source's key, so it lands in the partition of its original when both topics
 * have as many partitions. Keyed records therefore repeat per partition from replay to replay; keyless ones
 * are spread at random by that partitioner.
 */
import type { ConfigWith } from '../../../config/requirements.js';
import { KafkaProducerSink } from '../../kafka/producer-sink.js';
import type { BatchSink, Checkpoint, DeliveryReport, OutputMessage } from '../../pipeline/source-sink.js';
import type { TopicPartition } from '../../pipeline/topic-partition.js';

export class ReplayTopicSink implements BatchSink {
  private constructor(private readonly producer: KafkaProducerSink) {}

  static async create(config: ConfigWith<'kafka' | 'sink'>): Promise<ReplayTopicSink> {
    const producer = await KafkaProducerSink.create({
      kafka: config.kafka,
      sink: config.sink,
      delivery: { guarantee: 'at-least-once', stateTopic: undefined },
      group: config.source?.group ?? 'replay',
      ensureStateTopic: false,
    });
    return new ReplayTopicSink(producer);
  }

  loadState(partitions: readonly TopicPartition[]): Promise<undefined[]> {
    return Promise.resolve(partitions.map(() => undefined));
  }

  send(messages: readonly OutputMessage[]): Promise<void> {
    return this.producer.send(messages);
  }

  checkpoint(_checkpoint: Checkpoint): Promise<void> {
    return this.producer.checkpoint({ positions: [], state: [] });
  }

  abort(): Promise<void> {
    return this.producer.abort();
  }

  onDelivery(listener: (report: DeliveryReport) => void): void {
    this.producer.onDelivery(listener);
  }

  close(): Promise<void> {
    return this.producer.close();
  }
}
