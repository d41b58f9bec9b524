/**
 * Pass-through benchmark: the anchor the worker's throughput is held against.
 *
 *   npx tsx test/bench/passthrough.ts [--records 200000] [--partitions 3] [--batch 1000]
 *   (BENCH_RECORDS also sets the record count; KAFKA_BROKERS picks a cluster, else a local
 *   broker is started and stopped.)
 *
 * Produces N pump-station readings (Avro, ~190 bytes) to a source topic, then times
 *   1. node-rdkafka: consume(n) batches → async produce → commit, until every record is acked;
 *   2. kcat (if installed): `kcat -C` in a consumer group piped into `kcat -P`;
 * and prints records/s, MB/s and their ratio. It prints figures only; it asserts nothing.
 */
import { parseArgs } from 'node:util';

import Kafka from 'node-rdkafka';

import { startLocalBroker, type LocalBroker } from '../../deploy/kafka/local-broker.js';
import { consumeBatch } from '../support/consume-until.js';
import { connectConsumer, connectProducer, disconnect, settle } from '../support/kafka-clients.js';
import { produceWithBackpressure } from '../support/produce-with-backpressure.js';
import { pumpStationReadings, pumpStationReadingType } from '../support/pump-station-telemetry.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import { waitFor } from '../support/wait-for.js';
import { kcatVersion, runKcatPipe } from './kcat-pipe.js';

/** The node pipe gives up when the source yields nothing for this long. */
const STALL_TIMEOUT_MS = 30_000;

interface PipeResult {
  label: string;
  elapsedMs: number;
}

const { values: flags } = parseArgs({
  options: {
    records: { type: 'string', default: process.env.BENCH_RECORDS ?? '200000' },
    partitions: { type: 'string', default: '3' },
    batch: { type: 'string', default: '1000' },
  },
});
const recordCount = positiveInteger('--records', flags.records);
const partitions = positiveInteger('--partitions', flags.partitions);
const batchSize = positiveInteger('--batch', flags.batch);

function positiveInteger(name: string, text: string | undefined): number {
  const value = Number(text);
  if (!Number.isInteger(value) || value < 1) throw new Error(`${name} must be a positive integer, got \`${text}\``);
  return value;
}

/** Fills `topic` with `count` readings; returns the key+value bytes written. */
async function fillSourceTopic(brokers: string, topic: string, count: number): Promise<number> {
  const producer = await connectProducer({ 'metadata.broker.list': brokers });
  const nextReading = pumpStationReadings(1_000_003);
  let bytes = 0;
  const started = Date.now();
  for (let readingId = 0; readingId < count; readingId++) {
    const reading = nextReading(readingId);
    const value = pumpStationReadingType.toBuffer(reading);
    bytes += value.length + Buffer.byteLength(reading.stationId);
    await produceWithBackpressure(producer, { topic, value, key: reading.stationId, timestamp: reading.observedAt });
  }
  await settle('flush of the source topic', (done) => producer.flush(60_000, done));
  await disconnect(producer);
  const seconds = (Date.now() - started) / 1000;
  console.log(`source: ${count} records, ${(bytes / count).toFixed(0)} bytes each on average, produced in ${seconds.toFixed(1)} s (${Math.round(count / seconds)} records/s incl. Avro encoding)`);
  return bytes;
}

/** The plain node-rdkafka pipe: batch consume, async produce, commit after each batch. */
async function runNodePipe(brokers: string, sourceTopic: string, sinkTopic: string): Promise<number> {
  const consumer = await connectConsumer({ 'metadata.broker.list': brokers, 'group.id': uniqueName('bench-node-pipe') });
  const producer = await connectProducer({ 'metadata.broker.list': brokers });
  let acked = 0;
  const failures: string[] = [];
  producer.on('delivery-report', (error) => {
    if (error) failures.push(error.message);
    else acked += 1;
  });
  const started = Date.now();
  consumer.subscribe([sourceTopic]);
  let forwarded = 0;
  let firstRecordMs: number | undefined;
  let lastProgress = Date.now();
  while (forwarded < recordCount) {
    const batch = await consumeBatch(consumer, batchSize);
    if (batch.length > 0) lastProgress = Date.now();
    else if (Date.now() - lastProgress > STALL_TIMEOUT_MS) {
      throw new Error(`node pipe stalled: no records for ${STALL_TIMEOUT_MS} ms after ${forwarded} of ${recordCount}`);
    }
    if (firstRecordMs === undefined && batch.length > 0) firstRecordMs = Date.now() - started;
    for (const message of batch) {
      await produceWithBackpressure(producer, { topic: sinkTopic, value: message.value as Buffer, key: message.key, timestamp: message.timestamp });
    }
    forwarded += batch.length;
    if (batch.length > 0) consumer.commit();
  }
  await settle('flush of the node pipe', (done) => producer.flush(60_000, done));
  const elapsedMs = Date.now() - started;
  await waitFor(() => acked + failures.length >= recordCount, { what: 'delivery reports of the node pipe' });
  await disconnect(producer);
  await disconnect(consumer);
  if (failures.length > 0) throw new Error(`node pipe: ${failures.length} deliveries failed, first: ${failures[0]}`);
  console.log(`node pipe: first batch ${firstRecordMs} ms after subscribe (group join + first fetch), included below`);
  return elapsedMs;
}

/** Sum of the high watermarks: how many records a sink topic holds. */
async function countRecords(brokers: string, topic: string): Promise<number> {
  const consumer = await connectConsumer({ 'metadata.broker.list': brokers, 'group.id': uniqueName('bench-count') });
  try {
    let total = 0;
    for (let partition = 0; partition < partitions; partition++) {
      total += await new Promise<number>((resolve, reject) => {
        consumer.queryWatermarkOffsets(topic, partition, 10_000, (error, offsets) => (error ? reject(new Error(error.message)) : resolve(offsets.highOffset)));
      });
    }
    return total;
  } finally {
    await disconnect(consumer);
  }
}

function rateLine({ label, elapsedMs }: PipeResult, bytes: number): string {
  const seconds = elapsedMs / 1000;
  return `${label.padEnd(28)} ${seconds.toFixed(2).padStart(7)} s ${Math.round(recordCount / seconds).toString().padStart(9)} records/s ${(bytes / 1e6 / seconds).toFixed(1).padStart(7)} MB/s`;
}

async function main(): Promise<void> {
  let localBroker: LocalBroker | undefined;
  let brokers = process.env.KAFKA_BROKERS;
  if (!brokers) {
    localBroker = await startLocalBroker();
    brokers = localBroker.brokers;
    console.log(`local broker at ${brokers} (format ${localBroker.timings.formatMs} ms, ready ${localBroker.timings.readyMs} ms)`);
  }
  const topics: string[] = [];
  try {
    const newTopic = async (prefix: string) => {
      const topic = await createUniqueTopic(brokers, { prefix, partitions });
      topics.push(topic);
      return topic;
    };
    const source = await newTopic('bench-source');
    const bytes = await fillSourceTopic(brokers, source, recordCount);

    const results: PipeResult[] = [];
    const nodeSink = await newTopic('bench-node-sink');
    results.push({ label: 'node-rdkafka consume→produce', elapsedMs: await runNodePipe(brokers, source, nodeSink) });
    const nodeCount = await countRecords(brokers, nodeSink);
    if (nodeCount !== recordCount) throw new Error(`node pipe wrote ${nodeCount} records, expected ${recordCount}`);

    const kcat = kcatVersion();
    if (kcat) {
      const kcatSink = await newTopic('bench-kcat-sink');
      results.push({ label: 'kcat -C | kcat -P', elapsedMs: await runKcatPipe({ brokers, sourceTopic: source, sinkTopic: kcatSink, groupId: uniqueName('bench-kcat-pipe') }) });
      const kcatCount = await countRecords(brokers, kcatSink);
      if (kcatCount !== recordCount) throw new Error(`kcat pipe wrote ${kcatCount} records, expected ${recordCount} (a delimiter inside a record?)`);
    }

    console.log(`\npass-through of ${recordCount} records, ${partitions} partitions, wall clock from subscribe to the last ack:`);
    for (const result of results) console.log(rateLine(result, bytes));
    const [nodeResult, kcatResult] = results;
    if (nodeResult && kcatResult) {
      console.log(`node-rdkafka / kcat throughput ratio: ${(kcatResult.elapsedMs / nodeResult.elapsedMs).toFixed(2)} (node-rdkafka on librdkafka ${Kafka.librdkafkaVersion}; ${kcat})`);
    } else {
      console.log('kcat not installed (Debian: apt-get install kcat): no C-client reference figure');
    }
  } finally {
    if (topics.length > 0) await deleteTopics(brokers, topics);
    await localBroker?.stop();
  }
}

await main();
