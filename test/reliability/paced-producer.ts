/**
 * A live stream for the scale-out and soak scenarios: sorter events written at a fixed rate until told
 * to end, round-robin
 * over explicit partitions in the layout of test/support/run-worker-scenario.ts `writeEvents` (event i
 * at partition i mod P, offset ⌊i / P⌋; one idempotent producer writes the topic), so every record's
 * place is known without reading it back.
 */
import { setTimeout as delay } from 'node:timers/promises';

import { connectProducer, flushAndDisconnect } from '../support/kafka-clients.js';
import { produceWithBackpressure } from '../support/produce-with-backpressure.js';
import { sorterSchema, type SorterEvent, type WrittenEvent } from '../support/run-worker-scenario.js';

/** Records written per pacing step: ten steps a second keep the rate smooth. */
const STEPS_PER_SECOND = 10;

export interface PacedStream {
  /** Records handed to the producer so far. */
  written(): number;
  /**
   * Ends the stream (it also ends when `events` run out) and resolves with every record written, with
   * its place, once all are flushed.
   */
  end(): Promise<WrittenEvent[]>;
}

export function producePaced(brokers: string, topic: string, events: readonly SorterEvent[], partitions: number, perSecond: number): PacedStream {
  let count = 0;
  let stopped = false;
  const finished = (async () => {
    const producer = await connectProducer({ 'metadata.broker.list': brokers, 'enable.idempotence': true });
    const placed: WrittenEvent[] = [];
    try {
      const started = Date.now();
      const step = Math.max(1, Math.round(perSecond / STEPS_PER_SECOND));
      for (const [position, event] of events.entries()) {
        if (stopped) break;
        const value = sorterSchema.type.toBuffer(event);
        const partition = position % partitions;
        await produceWithBackpressure(producer, { topic, partition, value, key: event.parcelId, timestamp: Date.now() });
        placed.push({ partition, offset: BigInt(Math.floor(position / partitions)), value, event });
        count = position + 1;
        // Pacing the load generator to its schedule (not a wait for an effect).
        if (count % step === 0) await delay(Math.max(0, started + (count / perSecond) * 1000 - Date.now()));
      }
    } finally {
      await flushAndDisconnect(producer);
    }
    return placed;
  })();
  // Whoever calls `end` sees a failure; this only keeps one nobody waits for from ending the process.
  finished.catch(() => undefined);
  return {
    written: () => count,
    end: () => {
      stopped = true;
      return finished;
    },
  };
}
