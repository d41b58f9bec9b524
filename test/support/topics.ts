import { randomBytes } from 'node:crypto';

import Kafka from 'node-rdkafka';

import { settle } from './kafka-clients.js';

export interface UniqueTopicOptions {
  /** Start of the topic name, to tell tests' topics apart on a shared cluster. */
  prefix: string;
  /** @default 1 */
  partitions?: number;
  /**
   * Topic-level configs, laid over the defaults below.
   * @default { 'retention.ms': '-1' }
   */
  config?: Record<string, string>;
}

/**
 * Test records carry event-time timestamps from the past (the demo data starts in 2024), and
 * time-based retention (7 days by default) would delete them within minutes of writing, at the
 * broker's next retention check. Tests delete their topics themselves instead.
 */
const TEST_TOPIC_DEFAULTS: Record<string, string> = { 'retention.ms': '-1' };

/** `prefix-<random hex>`: unique per run, so tests never see each other's records. */
export function uniqueName(prefix: string): string {
  return `${prefix}-${randomBytes(5).toString('hex')}`;
}

/**
 * Creates a new topic (replication factor 1: the test brokers are single nodes) and returns
 * its name once the broker has acknowledged it.
 */
export async function createUniqueTopic(brokers: string, options: UniqueTopicOptions): Promise<string> {
  const topic = uniqueName(options.prefix);
  const admin = Kafka.AdminClient.create({ 'metadata.broker.list': brokers, 'client.id': 'raretide-test-admin' });
  try {
    await settle(`creating topic ${topic}`, (done) =>
      admin.createTopic({ topic, num_partitions: options.partitions ?? 1, replication_factor: 1, config: { ...TEST_TOPIC_DEFAULTS, ...options.config } }, 30_000, done));
  } finally {
    admin.disconnect();
  }
  return topic;
}

/** Deletes topics a test created, so a shared cluster (KAFKA_BROKERS) is left as found. */
export async function deleteTopics(brokers: string, topics: string[]): Promise<void> {
  const admin = Kafka.AdminClient.create({ 'metadata.broker.list': brokers, 'client.id': 'raretide-test-admin' });
  try {
    for (const topic of topics) {
      await settle(`deleting topic ${topic}`, (done) => admin.deleteTopic(topic, 30_000, done));
    }
  } finally {
    admin.disconnect();
  }
}
