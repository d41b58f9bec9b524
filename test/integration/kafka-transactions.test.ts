/**
 * The exactly-once sink on the real broker: outputs, balance state and source offsets in one
 * transaction per batch, as a read_committed reader and the consumer group see them.
 */
import { afterAll, describe, expect, it } from 'vitest';

import type { KafkaConfig } from '../../config/schema.js';
import { KafkaConsumerSource } from '../../connector/kafka/consumer-source.js';
import { KafkaProducerSink } from '../../connector/kafka/producer-sink.js';
import { shutdownKafkaAdapters } from '../../connector/kafka/shutdown.js';
import type { PartitionBalanceState } from '../../connector/pipeline/balance-state.js';
import type { InputMessage, SourcePosition } from '../../connector/pipeline/source-sink.js';
import { COPIED_FROM, copyAndCheckpoint, copyOf, endOffsets, fillTopic, headerText, positionsOf, readWholeTopic } from '../support/adapter-loop.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';

const brokers = kafkaBrokers();
const kafka: KafkaConfig = { brokers, settings: {} };
const createdTopics: string[] = [];

afterAll(async () => {
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
});

async function topics(prefix: string): Promise<{ source: string; output: string; deadLetter: string; group: string }> {
  const group = uniqueName(`${prefix}-group`);
  createdTopics.push(`raretide-state.${group}`);
  const [source, output, deadLetter] = await Promise.all([
    createUniqueTopic(brokers, { prefix: `${prefix}-src`, partitions: 3 }),
    createUniqueTopic(brokers, { prefix: `${prefix}-out`, partitions: 3 }),
    createUniqueTopic(brokers, { prefix: `${prefix}-dlq`, partitions: 1 }),
  ]);
  createdTopics.push(source, output, deadLetter);
  return { source, output, deadLetter, group };
}

/** State whose counts are the partition's next offset, so the last checkpoint's state is predictable. */
function stateFor(position: SourcePosition): PartitionBalanceState {
  return { version: 1, topic: position.topic, partition: position.partition, originals: { common: Number(position.nextOffset) }, synthetic: {}, capped: {} };
}

async function nonEmptyBatch(source: KafkaConsumerSource, size: number): Promise<readonly InputMessage[]> {
  for (let attempt = 0; attempt < 300; attempt++) {
    const batch = await source.nextBatch(size);
    if (batch !== null && batch.length > 0) return batch;
  }
  throw new Error('no records arrived');
}

async function committedByMember(source: KafkaConsumerSource, partitions: readonly { topic: string; partition: number }[]): Promise<Map<string, number>> {
  const answer = await new Promise<{ topic: string; partition: number; offset: number }[]>((resolve, reject) => {
    source.consumer.committed(partitions.map(({ topic, partition }) => ({ topic, partition })), 10_000, (error, offsets) => (error ? reject(new Error(error.message)) : resolve(offsets)));
  });
  return new Map(answer.map(({ topic, partition, offset }) => [`${topic}:${partition}`, offset]));
}

describe('exactly-once sink', () => {
  it('hides an aborted batch, shows checkpointed ones once, and commits offsets inside the transaction', async () => {
    const { source, output, deadLetter, group } = await topics('txn');
    const values = await fillTopic(brokers, source, 600, 0, 7_101);
    const consumer = await KafkaConsumerSource.connect({ kafka, topic: source, group });
    const sink = await KafkaProducerSink.create({
      kafka, sink: { topic: output, deadLetterTopic: deadLetter }, delivery: { guarantee: 'exactly-once' }, group, instanceId: 'replica-0', consumerGroup: consumer,
    });
    try {
      // Sent, then aborted: read_committed readers never see it, and the source is rewound to read it again.
      const aborted = await nonEmptyBatch(consumer, 100);
      await sink.send(aborted.map(copyOf));
      await sink.abort();
      expect(await readWholeTopic(brokers, output, 3)).toHaveLength(0);

      // One checkpoint: committed() answers exactly the positions sent in the transaction.
      const first = await nonEmptyBatch(consumer, 100);
      await sink.send(first.map(copyOf));
      const positions = positionsOf(first);
      await sink.checkpoint({ positions, state: positions.map(stateFor) });
      const committed = await committedByMember(consumer, positions);
      for (const { topic, partition, nextOffset } of positions) expect(committed.get(`${topic}:${partition}`)).toBe(Number(nextOffset));

      const rest = await copyAndCheckpoint(consumer, sink, { records: values.length - first.length, stateOf: (batch) => positionsOf(batch).map(stateFor) });
      expect(first.length + rest.length).toBe(values.length);
      const ends = await endOffsets(brokers, source, 3);
      const finalCommits = await committedByMember(consumer, ends.map((_, partition) => ({ topic: source, partition })));
      expect(ends.map((_, partition) => finalCommits.get(`${source}:${partition}`))).toEqual(ends);
      // The state written in the last transaction of each partition is what a restart loads.
      const loaded = await sink.loadState([0, 1, 2].map((partition) => ({ topic: source, partition })));
      expect(loaded.map((state) => state?.originals.common)).toEqual(ends);
    } finally {
      await shutdownKafkaAdapters({ source: consumer, sink });
    }

    const copies = await readWholeTopic(brokers, output, 3);
    expect(copies).toHaveLength(values.length);
    expect(new Set(copies.map((copy) => headerText(copy.headers, COPIED_FROM))).size).toBe(values.length);
  });

  it('after a crash mid-transaction, the restarted replica fences the old producer: every record once', async () => {
    const { source, output, deadLetter, group } = await topics('txn-crash');
    const values = await fillTopic(brokers, source, 900, 0, 7_102);
    const sinkOptions = { kafka, sink: { topic: output, deadLetterTopic: deadLetter }, delivery: { guarantee: 'exactly-once' as const }, group, instanceId: 'replica-0' };

    const firstConsumer = await KafkaConsumerSource.connect({ kafka, topic: source, group });
    const zombie = await KafkaProducerSink.create({ ...sinkOptions, consumerGroup: firstConsumer });
    await copyAndCheckpoint(firstConsumer, zombie, { records: 300 });
    // The process "dies" with a transaction open: its outputs are in the log, neither committed nor aborted.
    await zombie.send((await nonEmptyBatch(firstConsumer, 150)).map(copyOf));
    await firstConsumer.close();

    const consumer = await KafkaConsumerSource.connect({ kafka, topic: source, group });
    const sink = await KafkaProducerSink.create({ ...sinkOptions, consumerGroup: consumer });
    try {
      await copyAndCheckpoint(consumer, sink, { records: values.length - 300 });
    } finally {
      await shutdownKafkaAdapters({ source: consumer, sink });
    }
    // The old producer was fenced by the new one's initTransactions.
    await expect(zombie.close()).rejects.toMatchObject({ retriable: false });

    const copies = await readWholeTopic(brokers, output, 3);
    expect(copies).toHaveLength(values.length);
    expect(new Set(copies.map((copy) => headerText(copy.headers, COPIED_FROM))).size).toBe(values.length);
    // The zombie's records are still in the log, aborted: only read_uncommitted shows them.
    expect((await readWholeTopic(brokers, output, 3, 'read_uncommitted')).length).toBeGreaterThan(values.length);
  });
});
