/**
 * Smoke tests of node-rdkafka against the real broker from the global setup: Avro records with
 * headers through a consumer group, and transaction visibility under both isolation levels.
 */
import type { KafkaConsumer, Message, MessageHeader, TopicPartition } from 'node-rdkafka';
import { afterAll, describe, expect, it } from 'vitest';

import { consumeCount, consumeToEnd } from '../support/consume-until.js';
import { connectConsumer, connectProducer, disconnect, flushAndDisconnect, settle } from '../support/kafka-clients.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { pumpStationReadings, pumpStationReadingType, type PumpStationReading } from '../support/pump-station-telemetry.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import { waitFor } from '../support/wait-for.js';

const brokers = kafkaBrokers();
const createdTopics: string[] = [];

afterAll(async () => {
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
});

async function newTopic(prefix: string, partitions: number): Promise<string> {
  const topic = await createUniqueTopic(brokers, { prefix, partitions });
  createdTopics.push(topic);
  return topic;
}

function watermarks(consumer: KafkaConsumer, topic: string, partition: number): Promise<{ lowOffset: number; highOffset: number }> {
  return new Promise((resolve, reject) => {
    consumer.queryWatermarkOffsets(topic, partition, 10_000, (error, offsets) => (error ? reject(new Error(error.message)) : resolve(offsets)));
  });
}

/** Headers as [name, text] pairs in wire order; consumed header values always arrive as Buffers. */
function headerPairs(headers: MessageHeader[] | undefined): [string, string][] {
  return (headers ?? []).map((header) => {
    const [name, value] = Object.entries(header)[0] as [string, string | Buffer];
    expect(Buffer.isBuffer(value)).toBe(true);
    return [name, value.toString('utf8')];
  });
}

describe('Avro records with headers through a consumer group', () => {
  const RECORD_COUNT = 10_000;
  const PARTITIONS = 3;
  // The Avro spec's Parsing Canonical Form fingerprint, as a consumer would use to look the schema up.
  const fingerprint = pumpStationReadingType.fingerprint('sha256').toString('hex');

  function headersFor(reading: PumpStationReading): MessageHeader[] {
    // Sent as strings (node-rdkafka sends header values as UTF-8 text); a repeated name must keep its order.
    return [
      { 'schema-fingerprint': fingerprint },
      { 'reading-id': String(reading.readingId) },
      { site: reading.siteName },
      { trace: 'ingest' },
      { trace: `station/${reading.stationId}` },
    ];
  }

  it(`delivers each of ${RECORD_COUNT} records exactly once, decoded equal, headers intact`, async () => {
    const topic = await newTopic('smoke-avro', PARTITIONS);
    const nextReading = pumpStationReadings(20_240_304);
    const sent = Array.from({ length: RECORD_COUNT }, (_, readingId) => nextReading(readingId));

    const producer = await connectProducer({ 'metadata.broker.list': brokers });
    const deliveryErrors: string[] = [];
    let delivered = 0;
    producer.on('delivery-report', (error) => {
      if (error) deliveryErrors.push(error.message);
      else delivered += 1;
    });
    for (const reading of sent) {
      producer.produce(topic, null, pumpStationReadingType.toBuffer(reading), reading.stationId, reading.observedAt, undefined, headersFor(reading));
    }
    await settle('producer flush', (done) => producer.flush(30_000, done));
    await waitFor(() => delivered + deliveryErrors.length === RECORD_COUNT, { what: 'a delivery report for every record' });
    await disconnect(producer);
    expect(deliveryErrors).toEqual([]);

    const consumer = await connectConsumer({ 'metadata.broker.list': brokers, 'group.id': uniqueName('smoke-group') });
    try {
      consumer.subscribe([topic]);
      const received = await consumeCount(consumer, RECORD_COUNT, {
        what: `${RECORD_COUNT} records from ${topic}`,
        onBatch: () => consumer.commit(),
      });

      expect(received).toHaveLength(RECORD_COUNT);
      const seenIds = new Set<number>();
      for (const message of received) {
        const decoded = pumpStationReadingType.fromBuffer(message.value as Buffer) as PumpStationReading;
        const original = sent[decoded.readingId] as PumpStationReading;
        expect(seenIds.has(decoded.readingId)).toBe(false);
        seenIds.add(decoded.readingId);
        expect(decoded).toEqual(original);
        expect(message.key?.toString()).toBe(original.stationId);
        expect(message.timestamp).toBe(original.observedAt);
        expect(headerPairs(message.headers)).toEqual(headersFor(original).map((header) => Object.entries(header)[0]));
      }
      expect(seenIds.size).toBe(RECORD_COUNT);
      expect(new Set(received.map((message) => message.partition)).size).toBe(PARTITIONS);

      // Nothing left behind: each partition was read up to its end, and the group committed there.
      const partitions: TopicPartition[] = Array.from({ length: PARTITIONS }, (_, partition) => ({ topic, partition }));
      const ends = await Promise.all(partitions.map(({ partition }) => watermarks(consumer, topic, partition).then((w) => w.highOffset)));
      expect(ends.reduce((sum, end) => sum + end, 0)).toBe(RECORD_COUNT);
      expect(consumer.position(partitions).map((position) => position.offset)).toEqual(ends);
      consumer.commit();
      await waitFor(async () => {
        const committed = await new Promise<number[]>((resolve, reject) => {
          consumer.committed(partitions, 5_000, (error, offsets) => (error ? reject(new Error(error.message)) : resolve(offsets.map((o) => o.offset))));
        });
        return committed.every((offset, index) => offset === ends[index]);
      }, { what: 'the group to commit every partition at its end' });
    } finally {
      await disconnect(consumer);
    }
  });
});

describe('transactions', () => {
  const BATCH = 5;
  const valuesOf = (messages: Message[]) => messages.map((message) => message.value?.toString());
  const batchValues = (label: string) => Array.from({ length: BATCH }, (_, index) => `${label}-${index}`);

  async function readWholePartition(topic: string, isolationLevel: 'read_committed' | 'read_uncommitted'): Promise<Message[]> {
    const consumer = await connectConsumer({
      'metadata.broker.list': brokers,
      'group.id': uniqueName(`smoke-${isolationLevel}`),
      'enable.partition.eof': true,
      'isolation.level': isolationLevel,
    });
    try {
      consumer.assign([{ topic, partition: 0, offset: 0 }]);
      return await consumeToEnd(consumer, [{ topic, partition: 0 }], { what: `the end of ${topic}/0 (${isolationLevel})` });
    } finally {
      await disconnect(consumer);
    }
  }

  it('shows a committed transaction to read_committed consumers and hides an aborted one', async () => {
    const topic = await newTopic('smoke-txn', 1);
    const producer = await connectProducer({ 'metadata.broker.list': brokers, 'transactional.id': uniqueName('smoke-txn') });
    try {
      await settle('initTransactions', (done) => producer.initTransactions(30_000, done));

      // Aborted first, in the same partition: were aborted records visible, read_committed would
      // see them ahead of the committed ones.
      await settle('beginTransaction', (done) => producer.beginTransaction(done));
      for (const value of batchValues('aborted')) producer.produce(topic, 0, Buffer.from(value), 'k');
      // Flush so the aborted records are really written to the log before the abort.
      await settle('flush before abort', (done) => producer.flush(10_000, done));
      await settle('abortTransaction', (done) => producer.abortTransaction(10_000, done));

      await settle('beginTransaction', (done) => producer.beginTransaction(done));
      for (const value of batchValues('committed')) producer.produce(topic, 0, Buffer.from(value), 'k');
      await settle('commitTransaction', (done) => producer.commitTransaction(10_000, done));
    } finally {
      await flushAndDisconnect(producer);
    }

    const committedView = await readWholePartition(topic, 'read_committed');
    expect(valuesOf(committedView)).toEqual(batchValues('committed'));

    // The aborted records are in the log — read_uncommitted sees both batches; only the
    // isolation level hides them.
    const uncommittedView = await readWholePartition(topic, 'read_uncommitted');
    expect(valuesOf(uncommittedView)).toEqual([...batchValues('aborted'), ...batchValues('committed')]);

    // Each transaction ends in a control record (abort or commit marker) that takes an offset of
    // its own but is never delivered (KIP-98, "Transactional Messaging in Kafka"): 5 + 1 + 5 + 1.
    expect(uncommittedView.map((message) => message.offset)).toEqual([0, 1, 2, 3, 4, 6, 7, 8, 9, 10]);
  });
});
