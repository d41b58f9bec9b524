/**
 * Cluster chores on the real broker: topics ensured with their partition counts and configs, end
 * offsets, and consumer lag as committed offset against high watermark.
 */
import { afterAll, describe, expect, it } from 'vitest';

import type { KafkaConfig } from '../../config/schema.js';
import { consumerLag, KafkaAdmin } from '../../connector/kafka/admin.js';
import { KafkaConsumerSource } from '../../connector/kafka/consumer-source.js';
import { STATE_TOPIC_CONFIG } from '../../connector/kafka/state-topic.js';
import { fillTopic, positionsOf } from '../support/adapter-loop.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { deleteTopics, uniqueName } from '../support/topics.js';

const brokers = kafkaBrokers();
const kafka: KafkaConfig = { brokers, settings: {} };
const createdTopics: string[] = [];

afterAll(async () => {
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics);
});

describe('KafkaAdmin', () => {
  it('creates missing topics, leaves existing ones, and reports partition counts and end offsets', async () => {
    const [output, state] = [uniqueName('admin-out'), uniqueName('admin-state')];
    createdTopics.push(output, state);
    const admin = await KafkaAdmin.connect(kafka);
    try {
      expect(await admin.ensureTopics([{ topic: output, partitions: 3 }, { topic: state, partitions: 1, config: STATE_TOPIC_CONFIG }])).toEqual([
        { topic: output, created: true, partitions: 3 },
        { topic: state, created: true, partitions: 1 },
      ]);
      // Asked again with another count: the topic is left as it is and its real count reported.
      expect(await admin.ensureTopics([{ topic: output, partitions: 6 }])).toEqual([{ topic: output, created: false, partitions: 3 }]);
      expect(await admin.partitionCount(uniqueName('admin-missing'))).toBeUndefined();

      await fillTopic(brokers, output, 120, 0, 7_401);
      const ends = await admin.endOffsets(output);
      expect(ends.map(({ partition }) => partition)).toEqual([0, 1, 2]);
      expect(ends.reduce((sum, { end }) => sum + end, 0n)).toBe(120n);
    } finally {
      await admin.close();
    }
  });

  it('measures consumer lag as high watermark minus the committed offset', async () => {
    const topic = uniqueName('admin-lag');
    createdTopics.push(topic);
    const admin = await KafkaAdmin.connect(kafka);
    await admin.ensureTopics([{ topic, partitions: 1 }]);
    await admin.close();
    await fillTopic(brokers, topic, 50, 0, 7_402);

    const source = await KafkaConsumerSource.connect({ kafka, topic, group: uniqueName('admin-lag-group') });
    try {
      const partition = { topic, partition: 0 };
      expect(await consumerLag(source.consumer, [partition])).toEqual([{ ...partition, committed: undefined, highWatermark: 50n, lag: 50n }]);
      let batch = await source.nextBatch(20);
      while (batch !== null && batch.length === 0) batch = await source.nextBatch(20);
      await source.commit(positionsOf(batch!));
      await source.stop();
      const committed = BigInt(batch!.length);
      expect(await consumerLag(source.consumer, [partition])).toEqual([{ ...partition, committed, highWatermark: 50n, lag: 50n - committed }]);
    } finally {
      await source.close();
    }
  });
});
