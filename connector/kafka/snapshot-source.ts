/**
 * The bounded source of `replay`, `fit`, `inspect` and state loading: a topic as it stood when the
 * source opened. End offsets (high watermarks) are taken at start; partitions are read with `assign()`
 * (no group, nothing committed) from the earliest offset, a given offset or a timestamp up to those ends,
 * and `nextBatch` returns null once every partition reached its end — records written after the start
 * are not read, so a replay of a live topic terminates.
 *
 * A partition is done when a record at or past its end offset arrives (dropped) or when an
 * end-of-partition event reports a position at or past it: under read_committed the last offsets below
 * the high watermark may be transaction markers, which are never delivered as records.
 */
import { randomUUID } from 'node:crypto';

import Kafka, { type EofEvent, type KafkaConsumer, type Message } from 'node-rdkafka';

import { RaretideError } from '../../config/errors.js';
import type { KafkaConfig } from '../../config/schema.js';
import type { AssignmentListener, BatchSource, InputMessage } from '../pipeline/source-sink.js';
import type { TopicPartition } from '../pipeline/topic-partition.js';
import { callbackPromise, DEADLINE_GRACE_MS } from './callback-promise.js';
import { snapshotConsumerSettings, type ClientSettings } from './client-settings.js';
import { toInputMessage } from './input-message.js';
import { toKafkaError } from './kafka-errors.js';
import { PartitionMap } from './partition-map.js';

/** Where each partition's reading starts. */
export type SnapshotStart =
  | { readonly from: 'earliest' }
  /** The same offset in every partition (clamped to what the partition holds). */
  | { readonly from: 'offset'; readonly offset: bigint }
  /** The first record at or after this time (ms since the epoch), per partition. */
  | { readonly from: 'timestamp'; readonly timestamp: number };

export interface SnapshotSourceOptions {
  readonly kafka: KafkaConfig;
  readonly topic: string;
  /** @default { from: 'earliest' } */
  readonly start?: SnapshotStart;
  /** Only these partitions of `topic`. @default all */
  readonly partitions?: readonly number[];
  /** Client id part, e.g. `replay`, `state-reader`. @default snapshot */
  readonly purpose?: string;
  /** @default 100 */
  readonly pollTimeoutMs?: number;
  /** Connecting and each metadata/offset lookup. @default 30000 */
  readonly requestTimeoutMs?: number;
  readonly settings?: ClientSettings;
}

/** One partition's span: [start, end) in offsets, fixed when the source opened. */
export interface PartitionSpan extends TopicPartition {
  readonly start: bigint;
  readonly end: bigint;
}

export class KafkaSnapshotSource implements BatchSource {
  private readonly remaining = new PartitionMap<bigint>();
  /** The assignment listener's handling of the spans; records wait for it. */
  private announcement: Promise<void> = Promise.resolve();
  private readonly endsReached: EofEvent[] = [];
  private paused = false;
  private closed = false;

  private constructor(
    private readonly consumer: KafkaConsumer,
    /** The spans read, in partition order. */
    readonly spans: readonly PartitionSpan[],
  ) {
    for (const span of spans) if (span.start < span.end) this.remaining.set(span.topic, span.partition, span.end);
    // node-rdkafka emits a batch's end-of-partition events before handing over the batch itself, so they
    // are noted here and applied after the batch's records.
    consumer.on('partition.eof', (eof: EofEvent) => this.endsReached.push(eof));
  }

  static async open(options: SnapshotSourceOptions): Promise<KafkaSnapshotSource> {
    const requestTimeoutMs = options.requestTimeoutMs ?? 30_000;
    const consumer = new Kafka.KafkaConsumer(
      { ...snapshotConsumerSettings(options.kafka, options.purpose ?? 'snapshot', randomUUID()), ...options.settings },
      { 'auto.offset.reset': 'earliest' },
    );
    await callbackPromise('snapshot consumer connect', requestTimeoutMs + DEADLINE_GRACE_MS, (done) => consumer.connect({ timeout: requestTimeoutMs }, done));
    try {
      consumer.setDefaultConsumeTimeout(options.pollTimeoutMs ?? 100);
      const spans = await readSpans(consumer, options, requestTimeoutMs);
      const source = new KafkaSnapshotSource(consumer, spans);
      const toRead = spans.filter((span) => span.start < span.end);
      if (toRead.length > 0) consumer.assign(toRead.map(({ topic, partition, start }) => ({ topic, partition, offset: Number(start) })));
      return source;
    } catch (error) {
      await disconnect(consumer, requestTimeoutMs);
      throw error;
    }
  }

  /** Records to read in total: the sum of span lengths (an upper bound under read_committed). */
  get expectedRecords(): bigint {
    return this.spans.reduce((sum, span) => sum + (span.end - span.start), 0n);
  }

  async nextBatch(maxMessages: number): Promise<readonly InputMessage[] | null> {
    if (this.closed) throw new RaretideError('kafka.closed', 'nextBatch called after close', { retriable: false });
    await this.announcement;
    if (this.remaining.size === 0) return null;
    if (this.paused) return [];
    const messages = await new Promise<Message[]>((resolve, reject) => {
      this.consumer.consume(maxMessages, (error, batch) => (error ? reject(toKafkaError('snapshot consume', error)) : resolve(batch)));
    });
    const batch: InputMessage[] = [];
    for (const message of messages) {
      const end = this.remaining.get(message.topic, message.partition);
      if (end === undefined) continue;
      const offset = BigInt(message.offset);
      if (offset >= end) {
        this.finish(message.topic, message.partition);
        continue;
      }
      batch.push(toInputMessage(message));
      if (offset + 1n >= end) this.finish(message.topic, message.partition);
    }
    for (const eof of this.endsReached.splice(0)) {
      const end = this.remaining.get(eof.topic, eof.partition);
      if (end !== undefined && BigInt(eof.offset) >= end) this.finish(eof.topic, eof.partition);
    }
    if (batch.length === 0 && this.remaining.size === 0) return null;
    return batch;
  }

  /** No group to stay in: while paused, `nextBatch` returns empty batches without reading. */
  pause(): void {
    this.paused = true;
  }

  resume(): void {
    this.paused = false;
  }

  /** The spans are fixed at open: the listener hears of them once, and the first batch waits for it. */
  onAssignment(listener: AssignmentListener): void {
    this.announcement = listener.assigned(this.spans.map(({ topic, partition }) => ({ topic, partition })));
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    await disconnect(this.consumer, 30_000);
  }

  private finish(topic: string, partition: number): void {
    if (!this.remaining.has(topic, partition)) return;
    this.remaining.delete(topic, partition);
    // Stop fetching what lies beyond the snapshot.
    try {
      this.consumer.pause([{ topic, partition }]);
    } catch {
      // Pausing only saves fetches; a failure changes nothing about what is returned.
    }
  }
}

async function readSpans(consumer: KafkaConsumer, options: SnapshotSourceOptions, timeoutMs: number): Promise<PartitionSpan[]> {
  const { topic } = options;
  const metadata = await callbackPromise<Kafka.Metadata>(`reading metadata of ${topic}`, timeoutMs + DEADLINE_GRACE_MS, (done) =>
    consumer.getMetadata({ topic, timeout: timeoutMs }, done));
  const known = metadata.topics.find((entry) => entry.name === topic);
  if (known === undefined || known.partitions.length === 0) {
    throw new RaretideError('kafka.unknown-topic', `topic ${topic} does not exist (or has no partitions); create it, or correct its name in the config`, { retriable: false });
  }
  const existing = known.partitions.map((partition) => partition.id).sort((a, b) => a - b);
  const wanted = options.partitions ?? existing;
  const missing = wanted.filter((partition) => !existing.includes(partition));
  if (missing.length > 0) {
    throw new RaretideError('kafka.unknown-topic', `topic ${topic} has partitions ${existing.join(', ')}, not ${missing.join(', ')}`, { retriable: false });
  }
  const start = options.start ?? { from: 'earliest' };
  const startsByTime = start.from === 'timestamp' ? await offsetsForTime(consumer, topic, wanted, start.timestamp, timeoutMs) : undefined;
  const spans: PartitionSpan[] = [];
  for (const partition of wanted) {
    const marks = await callbackPromise<Kafka.WatermarkOffsets>(`reading the offsets of ${topic}:${partition}`, timeoutMs + DEADLINE_GRACE_MS, (done) =>
      consumer.queryWatermarkOffsets(topic, partition, timeoutMs, done));
    const low = BigInt(marks.lowOffset);
    const end = BigInt(marks.highOffset);
    let first = low;
    if (start.from === 'offset') first = start.offset < low ? low : start.offset > end ? end : start.offset;
    if (startsByTime !== undefined) first = startsByTime.get(partition) ?? end;
    spans.push({ topic, partition, start: first, end });
  }
  return spans;
}

/** First offset at or after `timestamp` per partition; partitions with none get no entry (nothing to read). */
async function offsetsForTime(consumer: KafkaConsumer, topic: string, partitions: readonly number[], timestamp: number, timeoutMs: number): Promise<Map<number, bigint>> {
  const found = await callbackPromise<Kafka.TopicPartitionOffset[]>(`looking up offsets of ${topic} at ${new Date(timestamp).toISOString()}`, timeoutMs + DEADLINE_GRACE_MS, (done) =>
    consumer.offsetsForTimes(partitions.map((partition) => ({ topic, partition, offset: timestamp })), timeoutMs, done));
  // librdkafka answers −1 (OFFSET_END) where no record is that recent.
  return new Map(found.filter((entry) => entry.offset >= 0).map((entry) => [entry.partition, BigInt(entry.offset)]));
}

async function disconnect(consumer: KafkaConsumer, timeoutMs: number): Promise<void> {
  if (!consumer.isConnected()) return;
  await callbackPromise('snapshot consumer disconnect', timeoutMs, (done) => consumer.disconnect(done));
}
