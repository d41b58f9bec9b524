/**
 * A node-rdkafka Producer's local queue as the sink uses it: `produce` that waits for room instead of
 * dropping, a flush that returns at the broker's pace, and "was everything since the last reset
 * delivered". Knows nothing of guarantees or transactions.
 */
import type { LibrdKafkaError, MessageHeader, Producer } from 'node-rdkafka';

import { RaretideError } from '../../config/errors.js';
import type { OutputMessage } from '../pipeline/source-sink.js';
import { DEADLINE_GRACE_MS, withDeadline } from './callback-promise.js';
import type { DeliveryTracker } from './delivery-tracker.js';
import { toKafkaError } from './kafka-errors.js';

/** librdkafka's ERR__QUEUE_FULL: `produce` refused because the local queue is full. */
const ERR_QUEUE_FULL = -184;

/** librdkafka's ERR__TIMED_OUT, as a flush that found messages still queued answers. */
const ERR_TIMED_OUT = -185;

/** One slice of a flush (see `flush`). */
const FLUSH_SLICE_MS = 1;

/** How long one wait for room in a full queue flushes before `produce` is tried again. */
const QUEUE_FULL_WAIT_MS = 5;

export interface OutgoingRecord {
  readonly topic: string;
  /** null: a tombstone. */
  readonly value: Buffer | null;
  readonly key: Buffer | string | null;
  /** undefined: librdkafka stamps the send time. */
  readonly timestamp?: number;
  /** Handed back with the delivery report (only when every message is reported). */
  readonly opaque?: OutputMessage;
  readonly headers?: MessageHeader[];
}

export class ProducerQueue {
  constructor(
    private readonly producer: Producer,
    readonly tracker: DeliveryTracker,
    /** Longest `produce` waits for room in a full queue. */
    private readonly queueFullMs: number,
    /** Throws when the producer became unusable (a fatal error) while `produce` waits. */
    private readonly raiseIfUnusable: () => void,
  ) {}

  /** One `produce`; false when the local queue is full (−184), the producer's back-pressure signal. */
  tryProduce(record: OutgoingRecord): boolean {
    try {
      this.producer.produce(record.topic, null, record.value, record.key, record.timestamp ?? null, record.opaque, record.headers);
    } catch (error) {
      if ((error as LibrdKafkaError).code === ERR_QUEUE_FULL) return false;
      throw toKafkaError(`producing to ${record.topic}`, error);
    }
    this.tracker.countSent();
    return true;
  }

  /**
   * `produce`, waiting for room while the queue is full — never dropping the record. librdkafka fails
   * queued messages after its `message.timeout.ms`, which frees room even when the broker is gone.
   */
  async produce(record: OutgoingRecord): Promise<void> {
    const since = Date.now();
    while (!this.tryProduce(record)) {
      if (Date.now() - since > this.queueFullMs) {
        throw new RaretideError('kafka.queue-full', `the producer queue stayed full for ${this.queueFullMs} ms; is the broker reachable?`, { retriable: true });
      }
      this.raiseIfUnusable();
      // A short flush returns as soon as the queue drains, or times out: either way, try again.
      await this.flushSlice(QUEUE_FULL_WAIT_MS);
    }
  }

  /**
   * Waits until every queued message is delivered or has failed. librdkafka's flush re-checks its queue
   * every 10 ms unless a delivery report wakes it, and with failure-only reports none does: measured on
   * the local broker, each checkpoint's flush took ~11 ms for a ~1 ms round trip. Flushing in short
   * slices until one finds the queue empty brings that down to the round trip. A slice that times out
   * is the expected case, so it costs no error of ours (and no timer): one deadline covers the flush.
   */
  async flush(operation: string, timeoutMs: number): Promise<void> {
    const deadline = Date.now() + timeoutMs;
    const slices = async () => {
      for (;;) {
        const error = await this.flushSlice(Math.min(FLUSH_SLICE_MS, timeoutMs));
        if (error === undefined) return;
        if (!isTimeout(error) || Date.now() >= deadline) throw toKafkaError(operation, error);
      }
    };
    await withDeadline(operation, timeoutMs + DEADLINE_GRACE_MS, slices());
  }

  /** Flushes, then raises the delivery failures since the tracker's last reset, if any. */
  async flushAndCheck(operation: string, timeoutMs: number): Promise<void> {
    await this.flush(operation, timeoutMs);
    await this.tracker.settled(timeoutMs);
    const failure = this.tracker.failure();
    if (failure !== undefined) throw failure;
  }

  /** One flush of at most `timeoutMs`; settles with its error (a timeout: messages still queued) instead of rejecting. */
  private flushSlice(timeoutMs: number): Promise<unknown> {
    return new Promise((resolve) => {
      try {
        this.producer.flush(timeoutMs, (error) => resolve(error ?? undefined));
      } catch (error) {
        resolve(error);
      }
    });
  }
}

/** A flush that ended with messages still queued: ERR__TIMED_OUT, which node-rdkafka may pass as text only. */
function isTimeout(error: unknown): boolean {
  const { code, message } = error as { code?: unknown; message?: unknown };
  return code === ERR_TIMED_OUT || /timed out/i.test(String(message));
}
