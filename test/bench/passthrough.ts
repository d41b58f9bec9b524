/**
 * Pass-through benchmark: the anchor the worker's throughput is held against.
 *
 *   npx tsx test/bench/passthrough.ts [--records 200000] [--partitions 3] [--batch 1000]
 *   (BENCH_RECORDS also sets the record count; KAFKA_BROKERS picks a cluster, else a local
 *   broker is started and stopped.)
 *
 * Produces N pump-station readings (Avro, ~190 bytes) to a source topic, then times
 *   1. node-rdkafka: consume(n) batches → async produce → commit, until every record is acked, once
 *      with a delivery report per message and once with failure reports only
 *      (`delivery.report.only.error`, what raretide's sink uses);
 *   2. raretide's Kafka adapters (connector/kafka): KafkaConsumerSource → KafkaProducerSink copying
 *      each batch and checkpointing it, at-least-once and exactly-once — the worker's I/O without
 *      the model;
 *   3. kcat (if installed): `kcat -C` in a consumer group piped into `kcat -P`;
 * and prints records/s, MB/s and their ratio. It prints figures only; it asserts nothing.
 *
 * What limits node-rdkafka here (measured while building connector/kafka, see its comments): a JS
 * delivery report per message costs ~10 µs of main-thread time and holds its queue slot until served;
 * consume(n) costs ~13 µs of CPU per message in the binding (kcat's consumer ~0.6 µs); produce ~4 µs.
 */
import { parseArgs } from 'node:util';

import Kafka from 'node-rdkafka';

import { KafkaConsumerSource } from '../../connector/kafka/consumer-source.js';
import { KafkaProducerSink } from '../../connector/kafka/producer-sink.js';
import { shutdownKafkaAdapters } from '../../connector/kafka/shutdown.js';
import { startLocalBroker, type LocalBroker } from '../../deploy/kafka/local-broker.js';
import { positionsOf, readWholeTopic } from '../support/adapter-loop.js';
import { connectConsumer, connectProducer, disconnect, settle } from '../support/kafka-clients.js';
import { produceWithBackpressure } from '../support/produce-with-backpressure.js';
import { pumpStationReadings, pumpStationReadingType } from '../support/pump-station-telemetry.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import { kcatVersion, runKcatPipe } from './kcat-pipe.js';
import { runNodePipe, STALL_TIMEOUT_MS } from './node-pipe.js';
import { positiveInteger } from './flags.js';

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

/** raretide's adapters as the worker drives them: each batch copied, sent and checkpointed. */
async function runAdapterPipe(brokers: string, sourceTopic: string, sinkTopic: string, guarantee: 'at-least-once' | 'exactly-once'): Promise<number> {
  const kafka = { brokers, settings: {} };
  const group = uniqueName('bench-adapters');
  stateTopics.push(`raretide-state.${group}`);
  const setupStarted = Date.now();
  const source = await KafkaConsumerSource.connect({ kafka, topic: sourceTopic, group });
  const sink = await KafkaProducerSink.create({
    kafka, sink: { topic: sinkTopic, deadLetterTopic: sinkTopic }, delivery: { guarantee }, group, instanceId: 'bench-0', consumerGroup: source,
  });
  const started = Date.now();
  console.log(`adapter pipe (${guarantee}): setup ${started - setupStarted} ms (connect, state topic, initTransactions; the group join overlaps it), not included below`);
  let copied = 0;
  let lastProgress = Date.now();
  try {
    while (copied < recordCount) {
      const batch = await source.nextBatch(Math.min(batchSize, recordCount - copied));
      if (batch === null || batch.length === 0) {
        if (Date.now() - lastProgress > STALL_TIMEOUT_MS) throw new Error(`adapter pipe stalled after ${copied} of ${recordCount}`);
        continue;
      }
      lastProgress = Date.now();
      // As the plain pipe: value, key and timestamp, no added headers.
      await sink.send(batch.map((input) => ({ route: 'output', value: input.value, key: input.key, headers: [], timestamp: input.timestamp, source: input })));
      await sink.checkpoint({ positions: positionsOf(batch), state: [] });
      copied += batch.length;
    }
    return Date.now() - started;
  } finally {
    await shutdownKafkaAdapters({ source, sink });
  }
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
  return `${label.padEnd(38)} ${seconds.toFixed(2).padStart(7)} s ${Math.round(recordCount / seconds).toString().padStart(9)} records/s ${(bytes / 1e6 / seconds).toFixed(1).padStart(7)} MB/s`;
}

/** State topics the adapter pipes' sinks create, deleted with the rest. */
const stateTopics: string[] = [];

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
    for (const reports of ['every message', 'failures only'] as const) {
      const nodeSink = await newTopic('bench-node-sink');
      const { elapsedMs, firstRecordMs } = await runNodePipe({ brokers, sourceTopic: source, sinkTopic: nodeSink, reports, recordCount, batchSize });
      console.log(`node pipe (${reports}): first batch ${firstRecordMs} ms after subscribe (group join + first fetch), included below`);
      results.push({ label: `node-rdkafka, reports: ${reports}`, elapsedMs });
      const nodeCount = await countRecords(brokers, nodeSink);
      if (nodeCount !== recordCount) throw new Error(`node pipe wrote ${nodeCount} records, expected ${recordCount}`);
    }
    for (const guarantee of ['at-least-once', 'exactly-once'] as const) {
      const adapterSink = await newTopic('bench-adapter-sink');
      results.push({ label: `raretide adapters, ${guarantee}`, elapsedMs: await runAdapterPipe(brokers, source, adapterSink, guarantee) });
      // read_committed: a transactional topic's offsets include one commit marker per transaction.
      const adapterCount = (await readWholeTopic(brokers, adapterSink, partitions)).length;
      if (adapterCount !== recordCount) throw new Error(`adapter pipe (${guarantee}) wrote ${adapterCount} records, expected ${recordCount}`);
    }

    const kcat = kcatVersion();
    if (kcat) {
      const kcatSink = await newTopic('bench-kcat-sink');
      results.push({ label: 'kcat -C | kcat -P', elapsedMs: await runKcatPipe({ brokers, sourceTopic: source, sinkTopic: kcatSink, groupId: uniqueName('bench-kcat-pipe') }) });
      const kcatCount = await countRecords(brokers, kcatSink);
      if (kcatCount !== recordCount) throw new Error(`kcat pipe wrote ${kcatCount} records, expected ${recordCount} (a delimiter inside a record?)`);
    }

    console.log(`\npass-through of ${recordCount} records, ${partitions} partitions, batches of ${batchSize}, wall clock from subscribe to the last ack:`);
    const kcatResult = results.find((result) => result.label.startsWith('kcat'));
    for (const result of results) {
      const ratio = kcatResult === undefined || result === kcatResult ? '' : `   ${(kcatResult.elapsedMs / result.elapsedMs).toFixed(2)}× kcat`;
      console.log(`${rateLine(result, bytes)}${ratio}`);
    }
    console.log(kcatResult === undefined
      ? 'kcat not installed (Debian: apt-get install kcat): no C-client reference figure'
      : `node-rdkafka on librdkafka ${Kafka.librdkafkaVersion}; ${kcat}`);
  } finally {
    if (topics.length > 0) await deleteTopics(brokers, [...topics, ...stateTopics]);
    await localBroker?.stop();
  }
}

await main();
