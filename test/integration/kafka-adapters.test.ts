/**
 * The Kafka source and at-least-once sink on the real broker of the global setup: the test plays the
 * pipeline core (copy each record with a header, checkpoint per batch).
 */
import { afterAll, describe, expect, it } from 'vitest';

import type { KafkaConfig } from '../../config/schema.js';
import { KafkaConsumerSource } from '../../connector/kafka/consumer-source.js';
import { KafkaProducerSink } from '../../connector/kafka/producer-sink.js';
import { shutdownKafkaAdapters } from '../../connector/kafka/shutdown.js';
import type { PartitionBalanceState } from '../../connector/pipeline/balance-state.js';
import type { OutputMessage } from '../../connector/pipeline/source-sink.js';
import type { TopicPartition } from '../../connector/pipeline/topic-partition.js';
import { COPIED_FROM, committedOffsets, copyAndCheckpoint, copyOf, endOffsets, fillTopic, headerText, positionsOf, readWholeTopic } from '../support/adapter-loop.js';
import { connectProducer, flushAndDisconnect } from '../support/kafka-clients.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';

const brokers = kafkaBrokers();
const kafka: KafkaConfig = { brokers, settings: {} };
const createdTopics: string[] = [];

afterAll(async () => {
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
});

async function newTopic(prefix: string, partitions: number, config?: Record<string, string>): Promise<string> {
  const topic = await createUniqueTopic(brokers, { prefix, partitions, ...(config === undefined ? {} : { config }) });
  createdTopics.push(topic);
  return topic;
}

/** A group, its state topic (deleted afterwards) and the sink config naming them. */
function newGroup(prefix: string): { group: string; stateTopic: string } {
  const group = uniqueName(prefix);
  const stateTopic = `raretide-state.${group}`;
  createdTopics.push(stateTopic);
  return { group, stateTopic };
}

function stateOf(partition: TopicPartition, originals: number): PartitionBalanceState {
  return { version: 1, ...partition, originals: { common: originals, rare: Math.floor(originals / 50) }, synthetic: { rare: originals / 10 }, capped: {} };
}

describe('consumer source + at-least-once sink', () => {
  it('copies 3,000 records of 3 partitions once each and commits every partition at its end', async () => {
    const [source, output, deadLetter] = [await newTopic('adapters-src', 3), await newTopic('adapters-out', 3), await newTopic('adapters-dlq', 1)];
    const values = await fillTopic(brokers, source, 3_000);
    const { group } = newGroup('adapters-alo');

    const consumer = await KafkaConsumerSource.connect({ kafka, topic: source, group });
    const assignedBeforeRecords: string[] = [];
    let recordsSeen = 0;
    consumer.onAssignment({
      assigned: async (partitions) => {
        expect(recordsSeen).toBe(0);
        assignedBeforeRecords.push(...partitions.map((p) => `${p.topic}:${p.partition}`));
      },
      revoked: async () => undefined,
    });
    const sink = await KafkaProducerSink.create({ kafka, sink: { topic: output, deadLetterTopic: deadLetter }, delivery: { guarantee: 'at-least-once' }, group, consumerGroup: consumer });
    try {
      const seen = await copyAndCheckpoint(consumer, sink, {
        records: values.length,
        stateOf: (batch) => {
          recordsSeen += batch.length;
          return positionsOf(batch).map((position) => stateOf(position, Number(position.nextOffset)));
        },
      });
      expect(seen).toHaveLength(3_000);
      expect(assignedBeforeRecords.sort()).toEqual([0, 1, 2].map((partition) => `${source}:${partition}`));
    } finally {
      await shutdownKafkaAdapters({ source: consumer, sink });
    }

    const copies = await readWholeTopic(brokers, output, 3);
    expect(copies).toHaveLength(3_000);
    // Every source record exactly once: the copies name 3,000 distinct source coordinates, and the
    // values are the source values (compared as sorted hex, since partitions interleave).
    expect(new Set(copies.map((copy) => headerText(copy.headers, COPIED_FROM))).size).toBe(3_000);
    expect(copies.map((copy) => copy.value!.toString('hex')).sort()).toEqual(values.map((value) => value.toString('hex')).sort());
    expect(await committedOffsets(brokers, group, source, 3)).toEqual(await endOffsets(brokers, source, 3));
  });

  it('re-delivers what was sent but not checkpointed before a crash: nothing lost, duplicates counted', async () => {
    const [source, output, deadLetter] = [await newTopic('adapters-crash-src', 3), await newTopic('adapters-crash-out', 3), await newTopic('adapters-crash-dlq', 1)];
    const values = await fillTopic(brokers, source, 1_200, 0, 7_002);
    const { group } = newGroup('adapters-crash');
    const sinkOptions = { kafka, sink: { topic: output, deadLetterTopic: deadLetter }, delivery: { guarantee: 'at-least-once' as const }, group };

    // First life: 600 records checkpointed, then one more batch sent (and delivered) but never
    // checkpointed — the process dies between send and checkpoint.
    const first = await KafkaConsumerSource.connect({ kafka, topic: source, group });
    const firstSink = await KafkaProducerSink.create({ ...sinkOptions, consumerGroup: first });
    let uncheckpointed = 0;
    try {
      await copyAndCheckpoint(first, firstSink, { records: 600 });
      let batch = await first.nextBatch(150);
      while (batch !== null && batch.length === 0) batch = await first.nextBatch(150);
      uncheckpointed = batch!.length;
      await firstSink.send(batch!.map(copyOf));
    } finally {
      await shutdownKafkaAdapters({ source: first, sink: firstSink });
    }
    expect(uncheckpointed).toBeGreaterThan(0);

    // Second life: resumes from the committed offsets and copies the rest.
    const second = await KafkaConsumerSource.connect({ kafka, topic: source, group });
    const secondSink = await KafkaProducerSink.create({ ...sinkOptions, consumerGroup: second });
    try {
      await copyAndCheckpoint(second, secondSink, { records: values.length - 600 });
    } finally {
      await shutdownKafkaAdapters({ source: second, sink: secondSink });
    }

    const copies = await readWholeTopic(brokers, output, 3);
    const origins = copies.map((copy) => headerText(copy.headers, COPIED_FROM));
    expect(new Set(origins).size).toBe(values.length);
    expect(copies.length - values.length).toBe(uncheckpointed);
    expect(await committedOffsets(brokers, group, source, 3)).toEqual(await endOffsets(brokers, source, 3));
  });

  it('abort seeks the source back to the last checkpoint, so an aborted batch is read again', async () => {
    const [source, output, deadLetter] = [await newTopic('adapters-abort-src', 3), await newTopic('adapters-abort-out', 3), await newTopic('adapters-abort-dlq', 1)];
    const values = await fillTopic(brokers, source, 900, 0, 7_003);
    const { group } = newGroup('adapters-abort');
    const consumer = await KafkaConsumerSource.connect({ kafka, topic: source, group });
    const sink = await KafkaProducerSink.create({ kafka, sink: { topic: output, deadLetterTopic: deadLetter }, delivery: { guarantee: 'at-least-once' }, group, consumerGroup: consumer });
    let aborted: string[] = [];
    let seen: string[] = [];
    try {
      seen = (await copyAndCheckpoint(consumer, sink, { records: 300 })).map((input) => `${input.partition}:${input.offset}`);
      let batch = await consumer.nextBatch(200);
      while (batch !== null && batch.length === 0) batch = await consumer.nextBatch(200);
      aborted = batch!.map((input) => `${input.partition}:${input.offset}`);
      await sink.send(batch!.map(copyOf));
      await sink.abort();
      seen.push(...(await copyAndCheckpoint(consumer, sink, { records: values.length - 300 })).map((input) => `${input.partition}:${input.offset}`));
    } finally {
      await shutdownKafkaAdapters({ source: consumer, sink });
    }
    // Every record read once after the abort — the aborted ones included — and none before it twice.
    expect(new Set(seen).size).toBe(values.length);
    expect(seen).toHaveLength(values.length);
    for (const key of aborted) expect(seen).toContain(key);
    // At-least-once cannot take sent records back: the aborted batch's copies are in the output twice.
    expect((await readWholeTopic(brokers, output, 3)).length).toBe(values.length + aborted.length);
  });

  it('persists balance state per partition in the compacted state topic; a new sink loads the latest', async () => {
    const [output, deadLetter] = [await newTopic('adapters-state-out', 1), await newTopic('adapters-state-dlq', 1)];
    const { group, stateTopic } = newGroup('adapters-state');
    const sinkOptions = { kafka, sink: { topic: output, deadLetterTopic: deadLetter }, delivery: { guarantee: 'at-least-once' as const }, group };
    const [p0, p1, p2] = [0, 1, 2].map((partition) => ({ topic: 'sorter.events', partition })) as [TopicPartition, TopicPartition, TopicPartition];

    const writer = await KafkaProducerSink.create(sinkOptions);
    expect(writer.stateTopic).toBe(stateTopic);
    try {
      await writer.checkpoint({ positions: [], state: [stateOf(p0, 100), stateOf(p1, 40)] });
      await writer.checkpoint({ positions: [], state: [stateOf(p0, 250)] });
    } finally {
      await writer.close();
    }

    const reader = await KafkaProducerSink.create(sinkOptions);
    try {
      expect(await reader.loadState([p1, p2, p0])).toEqual([stateOf(p1, 40), undefined, stateOf(p0, 250)]);
    } finally {
      await reader.close();
    }

    // A record that is not a balance state stops the load, naming the key and the fix.
    const producer = await connectProducer({ 'metadata.broker.list': brokers });
    producer.produce(stateTopic, null, Buffer.from('{"version":1,"topic":"sorter.events"'), 'sorter.events/2');
    await flushAndDisconnect(producer);
    const strict = await KafkaProducerSink.create(sinkOptions);
    try {
      await expect(strict.loadState([p2])).rejects.toMatchObject({ code: 'kafka.state-corrupt', message: expect.stringContaining('sorter.events/2') });
    } finally {
      await strict.close();
    }
  });
});

describe('producer sink back-pressure and failures', () => {
  function syntheticMessages(count: number, size: number, route: OutputMessage['route'] = 'output'): OutputMessage[] {
    return Array.from({ length: count }, (_, index) => ({
      route,
      value: Buffer.alloc(size, index % 251),
      key: Buffer.from(`key-${index % 17}`),
      headers: [{ 'test.index': String(index) }],
      timestamp: undefined,
      source: { topic: 'sorter.events', partition: 0, offset: BigInt(index) },
    }));
  }

  it('loses nothing when the local queue is tiny and fills up again and again', async () => {
    const [output, deadLetter] = [await newTopic('adapters-qfull-out', 3), await newTopic('adapters-qfull-dlq', 1)];
    const { group } = newGroup('adapters-qfull');
    const sink = await KafkaProducerSink.create({
      kafka,
      sink: { topic: output, deadLetterTopic: deadLetter },
      delivery: { guarantee: 'at-least-once' },
      group,
      settings: { 'queue.buffering.max.messages': 20 },
    });
    try {
      await sink.send([...syntheticMessages(2_900, 200), ...syntheticMessages(100, 50, 'dead-letter')]);
      await sink.checkpoint({ positions: [], state: [] });
    } finally {
      await sink.close();
    }
    const written = await readWholeTopic(brokers, output, 3);
    expect(written).toHaveLength(2_900);
    expect(new Set(written.map((message) => headerText(message.headers, 'test.index'))).size).toBe(2_900);
    expect(await readWholeTopic(brokers, deadLetter, 1)).toHaveLength(100);
  });

  it('fails the checkpoint when deliveries fail (more than one dispatch of reports); abort restores the last durable state', async () => {
    // The broker refuses records above the topic's max.message.bytes (Kafka topic config reference).
    const [output, deadLetter] = [await newTopic('adapters-fail-out', 1, { 'max.message.bytes': '16384' }), await newTopic('adapters-fail-dlq', 1)];
    const { group } = newGroup('adapters-fail');
    const sink = await KafkaProducerSink.create({ kafka, sink: { topic: output, deadLetterTopic: deadLetter }, delivery: { guarantee: 'at-least-once' }, group });
    try {
      const partition = { topic: 'sorter.events', partition: 0 };
      await sink.send(syntheticMessages(50, 100));
      await sink.checkpoint({ positions: [], state: [stateOf(partition, 50)] });
      // 250 refused records: node-rdkafka hands reports to JS 100 per event-loop turn. The state sent
      // with them arrives, so it is ahead of what was delivered until abort takes it back.
      await sink.send(syntheticMessages(250, 20_000));
      await expect(sink.checkpoint({ positions: [], state: [stateOf(partition, 300)] })).rejects.toMatchObject({
        code: 'kafka.record-too-large',
        message: expect.stringMatching(/^250 of 251 messages sent since the last checkpoint were not delivered/),
      });
      await sink.abort();
      expect(await sink.loadState([partition])).toEqual([stateOf(partition, 50)]);
      await sink.send(syntheticMessages(20, 100));
      await sink.checkpoint({ positions: [], state: [stateOf(partition, 70)] });
      expect(await sink.loadState([partition])).toEqual([stateOf(partition, 70)]);
    } finally {
      await sink.close();
    }
    expect(await readWholeTopic(brokers, output, 1)).toHaveLength(70);
  });
});
