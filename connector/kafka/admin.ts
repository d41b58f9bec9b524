/**
 * Cluster chores: making sure the topics the worker writes exist, offsets at either end of a partition,
 * and consumer lag for metrics. node-rdkafka's AdminClient only creates and deletes topics, so metadata
 * and offsets go through a plain (never producing) Producer connection.
 */
import { setTimeout as delay } from 'node:timers/promises';

import Kafka, { type IAdminClient, type KafkaConsumer, type Producer } from 'node-rdkafka';

import { RaretideError } from '../../config/errors.js';
import type { KafkaConfig } from '../../config/schema.js';
import type { TopicPartition } from '../pipeline/topic-partition.js';
import { callbackPromise, DEADLINE_GRACE_MS } from './callback-promise.js';
import { adminSettings } from './client-settings.js';

/** librdkafka's ERR_TOPIC_ALREADY_EXISTS. */
const ERR_TOPIC_ALREADY_EXISTS = 36;

export interface TopicSpec {
  readonly topic: string;
  readonly partitions: number;
  /** Topic-level configs (e.g. `cleanup.policy: compact`), applied only when the topic is created. */
  readonly config?: Readonly<Record<string, string>>;
  /**
   * Copies of each partition; −1 takes the broker's `default.replication.factor` (KIP-464).
   * @default -1
   */
  readonly replicationFactor?: number;
}

export interface EnsuredTopic {
  readonly topic: string;
  readonly created: boolean;
  /** Partitions the topic has now; may differ from the spec when it existed already. */
  readonly partitions: number;
}

export interface Watermarks {
  /** First offset still held. */
  readonly low: bigint;
  /** The offset the next record will get (the end offset). */
  readonly high: bigint;
}

export class KafkaAdmin {
  private constructor(
    private readonly admin: IAdminClient,
    private readonly metadataClient: Producer,
    private readonly timeoutMs: number,
  ) {}

  /** @param timeoutMs per request. */
  static async connect(kafka: KafkaConfig, timeoutMs = 30_000): Promise<KafkaAdmin> {
    const metadataClient = new Kafka.Producer(adminSettings(kafka, 'metadata'));
    await callbackPromise('metadata client connect', timeoutMs + DEADLINE_GRACE_MS, (done) => metadataClient.connect({ timeout: timeoutMs }, done));
    return new KafkaAdmin(Kafka.AdminClient.create(adminSettings(kafka, 'admin')), metadataClient, timeoutMs);
  }

  /** Creates the topics that do not exist yet; reports each topic's partition count either way. */
  async ensureTopics(specs: readonly TopicSpec[]): Promise<EnsuredTopic[]> {
    const ensured: EnsuredTopic[] = [];
    for (const spec of specs) {
      let created = true;
      try {
        await callbackPromise(`creating topic ${spec.topic}`, this.timeoutMs + DEADLINE_GRACE_MS, (done) =>
          this.admin.createTopic(
            { topic: spec.topic, num_partitions: spec.partitions, replication_factor: spec.replicationFactor ?? -1, config: { ...spec.config } },
            this.timeoutMs,
            done,
          ));
      } catch (error) {
        if (codeOf(error) !== ERR_TOPIC_ALREADY_EXISTS) throw error;
        created = false;
      }
      const partitions = await this.awaitPartitionCount(spec.topic);
      if (partitions === undefined) {
        throw new RaretideError('kafka.unknown-topic', `topic ${spec.topic} was ${created ? 'created' : 'reported to exist'} but is missing from the cluster metadata`, { retriable: true });
      }
      ensured.push({ topic: spec.topic, created, partitions });
    }
    return ensured;
  }

  /** The topic's partition count, or undefined when it does not exist. */
  async partitionCount(topic: string): Promise<number | undefined> {
    const metadata = await callbackPromise<Kafka.Metadata>(`reading metadata of ${topic}`, this.timeoutMs + DEADLINE_GRACE_MS, (done) =>
      this.metadataClient.getMetadata({ topic, timeout: this.timeoutMs }, done));
    const found = metadata.topics.find((entry) => entry.name === topic);
    return found === undefined || found.partitions.length === 0 ? undefined : found.partitions.length;
  }

  /** A topic just created shows in the metadata of every broker only after a moment: ask until it does. */
  private async awaitPartitionCount(topic: string): Promise<number | undefined> {
    const deadline = Date.now() + this.timeoutMs;
    for (let attempt = 0; ; attempt++) {
      const count = await this.partitionCount(topic);
      if (count !== undefined || Date.now() >= deadline) return count;
      await delay(Math.min(1_000, 25 * 2 ** attempt));
    }
  }

  async watermarks(partition: TopicPartition): Promise<Watermarks> {
    return queryWatermarks(this.metadataClient, partition, this.timeoutMs);
  }

  /** End offsets (high watermarks) of every partition of `topic`, in partition order. */
  async endOffsets(topic: string): Promise<(TopicPartition & { readonly end: bigint })[]> {
    const count = await this.partitionCount(topic);
    if (count === undefined) throw new RaretideError('kafka.unknown-topic', `topic ${topic} does not exist; create it, or correct its name in the config`, { retriable: false });
    const ends = [];
    for (let partition = 0; partition < count; partition++) {
      ends.push({ topic, partition, end: (await this.watermarks({ topic, partition })).high });
    }
    return ends;
  }

  async close(): Promise<void> {
    this.admin.disconnect();
    if (this.metadataClient.isConnected()) {
      await callbackPromise('metadata client disconnect', this.timeoutMs, (done) => this.metadataClient.disconnect(done));
    }
  }
}

export interface PartitionLag extends TopicPartition {
  /** The group's committed offset, or undefined when it has committed none. */
  readonly committed: bigint | undefined;
  readonly highWatermark: bigint;
  /** Records not yet committed: high watermark − committed (all of them when nothing is committed). */
  readonly lag: bigint;
}

/**
 * Committed offset against high watermark for `partitions`, for the consumer-lag metric. Uses the group
 * consumer itself: its `committed()` asks the group coordinator without joining anything.
 */
export async function consumerLag(consumer: KafkaConsumer, partitions: readonly TopicPartition[], timeoutMs = 10_000): Promise<PartitionLag[]> {
  if (partitions.length === 0) return [];
  const committed = await callbackPromise<Kafka.TopicPartitionOffset[]>('reading committed offsets', timeoutMs + DEADLINE_GRACE_MS, (done) =>
    consumer.committed(partitions.map(({ topic, partition }) => ({ topic, partition })), timeoutMs, done));
  const lags: PartitionLag[] = [];
  for (const { topic, partition } of partitions) {
    const marks = await queryWatermarks(consumer, { topic, partition }, timeoutMs);
    const entry = committed.find((candidate) => candidate.topic === topic && candidate.partition === partition);
    // librdkafka reports "no committed offset" as −1001 (OFFSET_INVALID).
    const offset = entry !== undefined && entry.offset >= 0 ? BigInt(entry.offset) : undefined;
    const from = offset ?? marks.low;
    lags.push({ topic, partition, committed: offset, highWatermark: marks.high, lag: marks.high > from ? marks.high - from : 0n });
  }
  return lags;
}

async function queryWatermarks(client: Producer | KafkaConsumer, { topic, partition }: TopicPartition, timeoutMs: number): Promise<Watermarks> {
  const marks = await callbackPromise<Kafka.WatermarkOffsets>(`reading the offsets of ${topic}:${partition}`, timeoutMs + DEADLINE_GRACE_MS, (done) =>
    client.queryWatermarkOffsets(topic, partition, timeoutMs, done));
  return { low: BigInt(marks.lowOffset), high: BigInt(marks.highOffset) };
}

function codeOf(error: unknown): number | undefined {
  const cause = error instanceof RaretideError ? error.cause : error;
  const code = (cause as { code?: unknown } | undefined)?.code;
  return typeof code === 'number' ? code : undefined;
}
