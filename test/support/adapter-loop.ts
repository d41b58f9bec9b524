/**
 * A stand-in for the pipeline core in the Kafka adapter tests: copies each input record to the output
 * with a header naming where it came from, and checkpoints after every batch. Plus helpers to fill a
 * source topic and read topics back.
 */
import type { Message, MessageHeader } from 'node-rdkafka';

import type { PartitionBalanceState } from '../../connector/pipeline/balance-state.js';
import type { BatchSink, BatchSource, InputMessage, OutputMessage, SourcePosition } from '../../connector/pipeline/source-sink.js';
import { consumeToEnd } from './consume-until.js';
import { connectConsumer, connectProducer, disconnect, flushAndDisconnect } from './kafka-clients.js';
import { produceWithBackpressure } from './produce-with-backpressure.js';
import { pumpStationReadings, pumpStationReadingType } from './pump-station-telemetry.js';
import { uniqueName } from './topics.js';

/** The header the copy loop adds: `<topic>:<partition>:<offset>` of the source record. */
export const COPIED_FROM = 'test.copied-from';

export function copyOf(input: InputMessage): OutputMessage {
  return {
    route: 'output',
    value: input.value,
    key: input.key,
    headers: [{ [COPIED_FROM]: `${input.topic}:${input.partition}:${input.offset}` }],
    timestamp: input.timestamp,
    source: input,
  };
}

/** Next offset per partition of a batch (what a checkpoint commits). */
export function positionsOf(batch: readonly InputMessage[]): SourcePosition[] {
  const next = new Map<string, SourcePosition>();
  for (const { topic, partition, offset } of batch) {
    const key = `${topic}/${partition}`;
    const current = next.get(key);
    if (current === undefined || offset + 1n > current.nextOffset) next.set(key, { topic, partition, nextOffset: offset + 1n });
  }
  return [...next.values()];
}

export interface CopyOptions {
  /** Stop once this many records were copied and checkpointed. */
  readonly records: number;
  /** @default 200 */
  readonly batchSize?: number;
  /** @default 60000 */
  readonly timeoutMs?: number;
  /** Balance state to persist with each checkpoint. @default none */
  readonly stateOf?: (batch: readonly InputMessage[]) => PartitionBalanceState[];
}

/** Copies and checkpoints batch by batch until `records` are done; returns the inputs seen. */
export async function copyAndCheckpoint(source: BatchSource, sink: BatchSink, options: CopyOptions): Promise<InputMessage[]> {
  const deadline = Date.now() + (options.timeoutMs ?? 60_000);
  const seen: InputMessage[] = [];
  while (seen.length < options.records) {
    if (Date.now() > deadline) throw new Error(`copied ${seen.length} of ${options.records} records before the deadline`);
    const batch = await source.nextBatch(Math.min(options.batchSize ?? 200, options.records - seen.length));
    if (batch === null) break;
    if (batch.length === 0) continue;
    await sink.send(batch.map(copyOf));
    await sink.checkpoint({ positions: positionsOf(batch), state: options.stateOf?.(batch) ?? [] });
    seen.push(...batch);
  }
  return seen;
}

/** Writes `count` pump-station readings (Avro, keyed by station) to `topic`; returns their values. */
export async function fillTopic(brokers: string, topic: string, count: number, firstReadingId = 0, seed = 7_001): Promise<Buffer[]> {
  const producer = await connectProducer({ 'metadata.broker.list': brokers });
  const next = pumpStationReadings(seed + firstReadingId);
  const values: Buffer[] = [];
  try {
    for (let readingId = firstReadingId; readingId < firstReadingId + count; readingId++) {
      const reading = next(readingId);
      const value = pumpStationReadingType.toBuffer(reading);
      values.push(value);
      await produceWithBackpressure(producer, { topic, value, key: reading.stationId, timestamp: reading.observedAt });
    }
  } finally {
    await flushAndDisconnect(producer);
  }
  return values;
}

/** Every record of `topic` visible under `isolation`, read with assign() from the start of each partition. */
export async function readWholeTopic(brokers: string, topic: string, partitions: number, isolation: 'read_committed' | 'read_uncommitted' = 'read_committed'): Promise<Message[]> {
  const consumer = await connectConsumer({
    'metadata.broker.list': brokers,
    'group.id': uniqueName('test-reader'),
    'enable.partition.eof': true,
    'isolation.level': isolation,
  });
  try {
    const all = Array.from({ length: partitions }, (_, partition) => ({ topic, partition }));
    consumer.assign(all.map((tp) => ({ ...tp, offset: 0 })));
    return await consumeToEnd(consumer, all, { what: `the end of ${topic} (${isolation})` });
  } finally {
    await disconnect(consumer);
  }
}

/** The group's committed offset per partition (−1001 where none), asked as a non-member. */
export async function committedOffsets(brokers: string, group: string, topic: string, partitions: number): Promise<number[]> {
  const consumer = await connectConsumer({ 'metadata.broker.list': brokers, 'group.id': group });
  try {
    const asked = Array.from({ length: partitions }, (_, partition) => ({ topic, partition }));
    const answer = await new Promise<{ partition: number; offset: number }[]>((resolve, reject) => {
      consumer.committed(asked, 10_000, (error, offsets) => (error ? reject(new Error(error.message)) : resolve(offsets)));
    });
    return asked.map(({ partition }) => answer.find((entry) => entry.partition === partition)?.offset ?? -1001);
  } finally {
    await disconnect(consumer);
  }
}

/** High watermark per partition. */
export async function endOffsets(brokers: string, topic: string, partitions: number): Promise<number[]> {
  const consumer = await connectConsumer({ 'metadata.broker.list': brokers, 'group.id': uniqueName('test-offsets') });
  try {
    const ends: number[] = [];
    for (let partition = 0; partition < partitions; partition++) {
      ends.push(await new Promise<number>((resolve, reject) => {
        consumer.queryWatermarkOffsets(topic, partition, 10_000, (error, offsets) => (error ? reject(new Error(error.message)) : resolve(offsets.highOffset)));
      }));
    }
    return ends;
  } finally {
    await disconnect(consumer);
  }
}

/** The text of the first header named `name`, or undefined. */
export function headerText(headers: MessageHeader[] | undefined, name: string): string | undefined {
  const found = headers?.find((header) => Object.keys(header)[0] === name);
  return found === undefined ? undefined : String(found[name]);
}
