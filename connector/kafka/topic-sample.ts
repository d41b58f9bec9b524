import type { KafkaConfig } from '../../config/schema.js';
import type { InputMessage } from '../pipeline/source-sink.js';
import type { ClientSettings } from './client-settings.js';
import { KafkaSnapshotSource, type SnapshotStart } from './snapshot-source.js';

export interface TopicSampleOptions {
  readonly kafka: KafkaConfig;
  readonly topic: string;
  /** Most records returned. */
  readonly limit: number;
  /** @default { from: 'earliest' } */
  readonly start?: SnapshotStart;
  /** Records asked per read. @default 1000 */
  readonly batchSize?: number;
  readonly settings?: ClientSettings;
}

export interface TopicSample {
  /** Framed payloads as read; the caller decodes them (connector/avro's PayloadDecoder). */
  readonly messages: readonly InputMessage[];
  /** Records the snapshot held in all (an upper bound under read_committed), for "n of m" messages. */
  readonly snapshotRecords: bigint;
  /** Where the sample came from, for messages and summaries. */
  readonly origin: string;
}

/**
 * Up to `limit` records of a topic as it stood at the call (earliest → end offsets taken at start), for
 * `inspect` and `fit`. Partitions are read side by side, so a sample smaller than the topic mixes them
 * in the order the broker hands them out rather than taking one partition first.
 */
export async function readTopicSample(options: TopicSampleOptions): Promise<TopicSample> {
  const source = await KafkaSnapshotSource.open({ kafka: options.kafka, topic: options.topic, start: options.start, purpose: 'sample', settings: options.settings });
  const messages: InputMessage[] = [];
  try {
    while (messages.length < options.limit) {
      const batch = await source.nextBatch(Math.min(options.batchSize ?? 1_000, options.limit - messages.length));
      if (batch === null) break;
      messages.push(...batch);
    }
  } finally {
    await source.close();
  }
  return { messages, snapshotRecords: source.expectedRecords, origin: `topic ${options.topic}` };
}
