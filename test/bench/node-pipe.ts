/**
 * The plain node-rdkafka pipe: batch consume, async produce, commit after each batch — the pass-through
 * figure the worker's throughput is held against (test/bench/passthrough.ts, test/bench/worker.ts).
 */
import { setImmediate as nextTurn } from 'node:timers/promises';

import type { LibrdKafkaError, Producer } from 'node-rdkafka';

import { consumeBatch } from '../support/consume-until.js';
import { connectConsumer, connectProducer, disconnect, settle } from '../support/kafka-clients.js';
import { uniqueName } from '../support/topics.js';
import { waitFor } from '../support/wait-for.js';

/** The node pipe gives up when the source yields nothing for this long. */
export const STALL_TIMEOUT_MS = 30_000;

/** librdkafka's ERR__QUEUE_FULL: `produce` refused, the local queue is full. */
const ERR_QUEUE_FULL = -184;

export type ReportMode = 'every message' | 'failures only';

export interface NodePipeOptions {
  readonly brokers: string;
  readonly sourceTopic: string;
  readonly sinkTopic: string;
  /** A delivery report per message, or failures only (`delivery.report.only.error`, what raretide's sink uses). */
  readonly reports: ReportMode;
  /** Records to forward: the pipe stops once this many were consumed and acknowledged. */
  readonly recordCount: number;
  /** Messages per `consume(n)`. */
  readonly batchSize: number;
  /**
   * Records forwarded before the steady-state mark (`steadyFromMs`): what runs before it (JIT, first
   * fetches) is left out of a steady-state rate.
   * @default 0
   */
  readonly warmUpRecords?: number;
}

/**
 * Waits for room after a queue-full refusal. With a report per message the next report frees a slot;
 * with failure reports only there is none to wait for, so a short flush does the waiting.
 */
async function waitForRoom(producer: Producer, reports: ReportMode): Promise<void> {
  if (reports === 'every message') await new Promise((resolve) => producer.once('delivery-report', resolve));
  else await new Promise((resolve) => producer.flush(5, resolve));
}

export interface NodePipeTiming {
  /** From subscribe to the last ack. */
  readonly elapsedMs: number;
  /** From subscribe to the first batch in hand: the group join and first fetch, part of `elapsedMs`. */
  readonly firstRecordMs: number;
  /** From subscribe to the end of the batch that took the count forwarded to `warmUpRecords` or more. */
  readonly steadyFromMs: number;
  /** Records forwarded by then. */
  readonly steadyFromRecords: number;
}

/** Runs the pipe in a fresh consumer group. */
export async function runNodePipe({ brokers, sourceTopic, sinkTopic, reports, recordCount, batchSize, warmUpRecords = 0 }: NodePipeOptions): Promise<NodePipeTiming> {
  const consumer = await connectConsumer({ 'metadata.broker.list': brokers, 'group.id': uniqueName('bench-node-pipe') });
  const producer = await connectProducer({ 'metadata.broker.list': brokers, 'delivery.report.only.error': reports === 'failures only' });
  let acked = 0;
  const failures: string[] = [];
  producer.on('delivery-report', (error: LibrdKafkaError | null) => {
    if (error) failures.push(error.message);
    else acked += 1;
  });
  const started = Date.now();
  consumer.subscribe([sourceTopic]);
  let forwarded = 0;
  let firstRecordMs: number | undefined;
  let steadyFrom: { ms: number; records: number } | undefined;
  let lastProgress = Date.now();
  while (forwarded < recordCount) {
    const batch = await consumeBatch(consumer, batchSize);
    if (batch.length > 0) lastProgress = Date.now();
    else if (Date.now() - lastProgress > STALL_TIMEOUT_MS) {
      throw new Error(`node pipe stalled: no records for ${STALL_TIMEOUT_MS} ms after ${forwarded} of ${recordCount}`);
    }
    if (firstRecordMs === undefined && batch.length > 0) firstRecordMs = Date.now() - started;
    for (const message of batch) {
      for (;;) {
        try {
          producer.produce(sinkTopic, null, message.value, message.key, message.timestamp);
          break;
        } catch (error) {
          if ((error as LibrdKafkaError).code !== ERR_QUEUE_FULL) throw error;
          await waitForRoom(producer, reports);
        }
      }
    }
    forwarded += batch.length;
    if (batch.length > 0) consumer.commit();
    if (steadyFrom === undefined && forwarded >= warmUpRecords && forwarded > 0) steadyFrom = { ms: Date.now() - started, records: forwarded };
  }
  await settle('flush of the node pipe', (done) => producer.flush(60_000, done));
  if (reports === 'every message') await waitFor(() => acked + failures.length >= recordCount, { what: 'delivery reports of the node pipe' });
  // Failure reports queued before the flush returned reach JS within the next turns (connector/kafka/delivery-tracker.ts).
  else {
    let seen: number;
    do {
      seen = failures.length;
      await nextTurn();
    } while (failures.length !== seen);
  }
  const elapsedMs = Date.now() - started;
  await disconnect(producer);
  await disconnect(consumer);
  if (failures.length > 0) throw new Error(`node pipe: ${failures.length} deliveries failed, first: ${failures[0]}`);
  return { elapsedMs, firstRecordMs: firstRecordMs ?? elapsedMs, steadyFromMs: steadyFrom?.ms ?? elapsedMs, steadyFromRecords: steadyFrom?.records ?? forwarded };
}
