/**
 * The bounded snapshot source (replay, fit, inspect, state loading) on the real broker: it reads a
 * topic as it stood when opened and then ends, however much is written meanwhile.
 */
import { afterAll, describe, expect, it } from 'vitest';

import type { KafkaConfig } from '../../config/schema.js';
import { KafkaSnapshotSource } from '../../connector/kafka/snapshot-source.js';
import { readTopicSample } from '../../connector/kafka/topic-sample.js';
import type { InputMessage } from '../../connector/pipeline/source-sink.js';
import { endOffsets, fillTopic } from '../support/adapter-loop.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { pumpStationReadingType } from '../support/pump-station-telemetry.js';
import { createUniqueTopic, deleteTopics } from '../support/topics.js';

const brokers = kafkaBrokers();
const kafka: KafkaConfig = { brokers, settings: {} };
const createdTopics: string[] = [];

afterAll(async () => {
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
});

async function readToEnd(source: KafkaSnapshotSource): Promise<InputMessage[]> {
  const all: InputMessage[] = [];
  try {
    for (;;) {
      const batch = await source.nextBatch(250);
      if (batch === null) return all;
      all.push(...batch);
    }
  } finally {
    await source.close();
  }
}

describe('snapshot source', () => {
  it('stops at the end offsets taken at open while a producer keeps writing, and starts where asked', async () => {
    const topic = await createUniqueTopic(brokers, { prefix: 'snapshot', partitions: 3 });
    createdTopics.push(topic);
    await fillTopic(brokers, topic, 900, 0, 7_201);
    const endsAtOpen = await endOffsets(brokers, topic, 3);

    const snapshot = await KafkaSnapshotSource.open({ kafka, topic });
    expect(snapshot.spans.map((span) => Number(span.end))).toEqual(endsAtOpen);
    const writing = fillTopic(brokers, topic, 300, 900, 7_201);
    const read = await readToEnd(snapshot);
    await writing;

    expect(read).toHaveLength(900);
    expect(new Set(read.map((message) => `${message.partition}:${message.offset}`)).size).toBe(900);
    for (const message of read) expect(message.offset < BigInt(endsAtOpen[message.partition]!)).toBe(true);
    // The producer's records did land after the snapshot's ends.
    expect((await endOffsets(brokers, topic, 3)).reduce((sum, end) => sum + end, 0)).toBe(1_200);

    // From an offset: the same offset in every partition, up to the (new) ends.
    const ends = await endOffsets(brokers, topic, 3);
    const fromOffset = await readToEnd(await KafkaSnapshotSource.open({ kafka, topic, start: { from: 'offset', offset: 250n } }));
    expect(fromOffset).toHaveLength(ends.reduce((sum, end) => sum + Math.max(0, end - 250), 0));

    // From a time: readings are a minute apart and written in order, so from reading 600's time on
    // exactly readings 600…1199 remain, whichever partition each went to.
    const reading600 = pumpStationReadingType.fromBuffer(read.find((message) => pumpStationReadingType.fromBuffer(message.value).readingId === 600)!.value);
    const fromTime = await readToEnd(await KafkaSnapshotSource.open({ kafka, topic, start: { from: 'timestamp', timestamp: reading600.observedAt } }));
    const ids = fromTime.map((message) => pumpStationReadingType.fromBuffer(message.value).readingId as number).sort((a, b) => a - b);
    expect(ids).toEqual(Array.from({ length: 600 }, (_, index) => 600 + index));
  });

  it('samples up to N records for inspect/fit and reports the snapshot size', async () => {
    const topic = await createUniqueTopic(brokers, { prefix: 'snapshot-sample', partitions: 3 });
    createdTopics.push(topic);
    const values = await fillTopic(brokers, topic, 400, 0, 7_202);
    const sample = await readTopicSample({ kafka, topic, limit: 150 });
    expect(sample.messages).toHaveLength(150);
    expect(sample.snapshotRecords).toBe(400n);
    const known = new Set(values.map((value) => value.toString('hex')));
    for (const message of sample.messages) expect(known.has(message.value.toString('hex'))).toBe(true);
    expect((await readTopicSample({ kafka, topic, limit: 10_000 })).messages).toHaveLength(400);
  });

  it('ends at once on an empty topic and names a missing one', async () => {
    const topic = await createUniqueTopic(brokers, { prefix: 'snapshot-empty', partitions: 2 });
    createdTopics.push(topic);
    expect(await readToEnd(await KafkaSnapshotSource.open({ kafka, topic }))).toEqual([]);
    await expect(KafkaSnapshotSource.open({ kafka, topic: `${topic}-missing` })).rejects.toMatchObject({ code: 'kafka.unknown-topic', message: expect.stringContaining(`${topic}-missing`) });
  });
});
