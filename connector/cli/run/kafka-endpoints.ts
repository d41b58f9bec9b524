/**
 * The worker's Kafka side: the topics it needs, checked or created before anything is read, and the
 * group source and producer sink for the configured delivery guarantee, linked so checkpoints commit
 * the source positions (in the transaction, for exactly-once).
 */
import { RaretideError } from '../../../config/errors.js';
import type { ConfigWith } from '../../../config/requirements.js';
import { KafkaAdmin } from '../../kafka/admin.js';
import { KafkaConsumerSource } from '../../kafka/consumer-source.js';
import type { KafkaLogger } from '../../kafka/kafka-log.js';
import { KafkaProducerSink } from '../../kafka/producer-sink.js';
import { shutdownKafkaAdapters } from '../../kafka/shutdown.js';
import type { Logger } from '../../ops/logger.js';

/** The config sections the worker reads. */
export type RunConfig = ConfigWith<'kafka' | 'source' | 'sink' | 'label' | 'balance' | 'model'>;

export interface KafkaEndpoints {
  readonly source: KafkaConsumerSource;
  readonly sink: KafkaProducerSink;
}

/**
 * Fails (not retriable) when the source topic is missing: the worker would otherwise wait on it for
 * ever. Creates the output and dead-letter topics when missing, with the source's partition count so a
 * keyed synthetic record lands in the partition of its original. (The sink creates the state topic.)
 */
export async function prepareTopics(config: RunConfig, log: Logger): Promise<void> {
  const admin = await KafkaAdmin.connect(config.kafka);
  try {
    const partitions = await admin.partitionCount(config.source.topic);
    if (partitions === undefined) {
      throw new RaretideError(
        'kafka.unknown-topic',
        `source.topic ${config.source.topic} does not exist on ${config.kafka.brokers}: create it, or correct source.topic in the config`,
        { retriable: false },
      );
    }
    const ensured = await admin.ensureTopics([
      { topic: config.sink.topic, partitions },
      { topic: config.sink.deadLetterTopic, partitions },
    ]);
    for (const topic of ensured) {
      if (topic.created) log.info(`created topic ${topic.topic} with ${topic.partitions} partitions`, { topic: topic.topic, partitions: topic.partitions });
    }
  } finally {
    await admin.close();
  }
}

/**
 * Connects the group source, then the sink linked to it. `beforeSink` runs in between, so whoever must
 * listen to the source's assignments does so before any time passes.
 */
export async function openKafkaEndpoints(
  config: RunConfig,
  options: { readonly instanceId: string; readonly log: Logger; readonly beforeSink: (source: KafkaConsumerSource) => void },
): Promise<KafkaEndpoints> {
  const log = kafkaLogger(options.log);
  const source = await KafkaConsumerSource.connect({ kafka: config.kafka, topic: config.source.topic, group: config.source.group, log });
  try {
    options.beforeSink(source);
    const sink = await KafkaProducerSink.create({
      kafka: config.kafka,
      sink: config.sink,
      delivery: config.delivery,
      group: config.source.group,
      instanceId: options.instanceId,
      consumerGroup: source,
      log,
    });
    return { source, sink };
  } catch (error) {
    await source.close().catch(() => undefined);
    throw error;
  }
}

/** Stop reading → abort an open transaction → flush and check → disconnect (see kafka/shutdown.ts). */
export function closeKafkaEndpoints({ source, sink }: KafkaEndpoints, timeoutMs: number): Promise<void> {
  return shutdownKafkaAdapters({ source, sink, timeoutMs });
}

/** The adapters' log entries as lines of the worker's log. */
export function kafkaLogger(log: Logger): KafkaLogger {
  return ({ level, message, error, fields }) => log.log(level, message, { ...fields, ...(error === undefined ? {} : { error }) });
}
