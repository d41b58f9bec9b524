/**
 * Delivery reports of the sink's producer since the last checkpoint: how many were sent, which failed,
 * and (when every message is reported) who listens.
 *
 * With `delivery.report.only.error` only failures are reported. Deciding "did anything fail" then rests
 * on ordering: librdkafka serves a report (node-rdkafka queues it and signals its dispatcher) before
 * `flush` returns, so every report of a flushed message is queued before the flush's completion is
 * signalled. node-rdkafka hands the queued reports to JS up to 100 per event-loop turn
 * (DeliveryReportDispatcher::Flush in its src/callbacks.cc), in the same turn as the flush callback or
 * earlier. `settled()` therefore waits one turn after the flush, and another for as long as reports keep
 * coming.
 */
import { setImmediate as nextTurn } from 'node:timers/promises';

import type { DeliveryReport as RdDeliveryReport, LibrdKafkaError } from 'node-rdkafka';

import { RaretideError } from '../../config/errors.js';
import type { DeliveryReport, OutputMessage } from '../pipeline/source-sink.js';
import { toKafkaError } from './kafka-errors.js';

/** Failed deliveries kept with their text; the rest are only counted. */
const FAILURES_KEPT = 5;

export class DeliveryTracker {
  private sent = 0;
  private reported = 0;
  private failed = 0;
  private readonly failures: RaretideError[] = [];
  private readonly listeners: ((report: DeliveryReport) => void)[] = [];
  private allReported: (() => void) | undefined;

  constructor(
    /** True when librdkafka reports every message (with the OutputMessage as opaque), not only failures. */
    readonly perMessage: boolean,
    private readonly clock: () => number,
  ) {}

  /** Counts one message handed to `produce`. */
  countSent(): void {
    this.sent += 1;
  }

  /** The producer's `delivery-report` handler. */
  readonly onReport = (error: LibrdKafkaError | null | undefined, report: RdDeliveryReport): void => {
    this.reported += 1;
    const failure = error ? toKafkaError(`delivery to ${report.topic}:${report.partition}`, error) : undefined;
    // Messages of an aborted transaction are purged from the queue by design; that is no failure.
    if (failure !== undefined && !isPurged(error)) {
      this.failed += 1;
      if (this.failures.length < FAILURES_KEPT) this.failures.push(failure);
    }
    const message = report.opaque as OutputMessage | undefined;
    if (message !== undefined) {
      const delivery: DeliveryReport = { message, deliveredAt: this.clock(), error: failure };
      for (const listener of this.listeners) listener(delivery);
    }
    if (this.allReported !== undefined && this.reported >= this.sent) this.allReported();
  };

  addListener(listener: (report: DeliveryReport) => void): void {
    this.listeners.push(listener);
  }

  /** Waits until every report of the messages flushed so far has reached JS (see the file comment). */
  async settled(deadlineMs: number): Promise<void> {
    if (this.perMessage) {
      if (this.reported >= this.sent) return;
      let timer: NodeJS.Timeout | undefined;
      try {
        await new Promise<void>((resolve, reject) => {
          this.allReported = resolve;
          timer = setTimeout(() => reject(new RaretideError('kafka.timeout', `${this.sent - this.reported} delivery reports did not arrive within ${deadlineMs} ms after the flush`, { retriable: true })), deadlineMs);
        });
      } finally {
        clearTimeout(timer);
        this.allReported = undefined;
      }
      return;
    }
    let seen: number;
    do {
      seen = this.failed;
      await nextTurn();
    } while (this.failed !== seen);
  }

  /** The failures since the last reset as one error (the first failure's code), or undefined. */
  failure(): RaretideError | undefined {
    const first = this.failures[0];
    if (first === undefined) return undefined;
    const others = [...new Set(this.failures.slice(1).map((failure) => failure.message))].filter((text) => text !== first.message);
    const more = others.length > 0 ? `; other failures: ${others.join(' | ')}` : '';
    return new RaretideError(first.code, `${this.failed} of ${this.sent} messages sent since the last checkpoint were not delivered: ${first.message}${more}`, {
      retriable: first.retriable,
      cause: first,
    });
  }

  /** Starts a new checkpoint interval (after a checkpoint, or an abort that waited for every report). */
  reset(): void {
    this.sent = 0;
    this.reported = 0;
    this.failed = 0;
    this.failures.length = 0;
  }
}

/**
 * librdkafka's ERR__PURGE_QUEUE / ERR__PURGE_INFLIGHT, reported for messages `abortTransaction` dropped
 * (node-rdkafka passes delivery errors as text only: "purged in queue", "purged in flight").
 */
function isPurged(error: LibrdKafkaError | null | undefined): boolean {
  return error?.code === -152 || error?.code === -151 || /purged in (queue|flight)/i.test(String(error?.message));
}
