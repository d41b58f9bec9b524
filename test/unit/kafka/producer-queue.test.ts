/**
 * ProducerQueue's flush in short slices: it ends with the first slice that finds the queue empty, takes
 * a timed-out slice (librdkafka's ERR__TIMED_OUT, −185, "Local: Timed out") as "not yet", raises any
 * other error, and gives up at its deadline. A scripted stand-in for node-rdkafka's Producer.
 */
import type { LibrdKafkaError, Producer } from 'node-rdkafka';
import { describe, expect, it } from 'vitest';

import { DeliveryTracker } from '../../../connector/kafka/delivery-tracker.js';
import { ProducerQueue } from '../../../connector/kafka/producer-queue.js';

const TIMED_OUT: LibrdKafkaError = { message: 'Local: Timed out', code: -185, errno: -185, origin: 'kafka' };

/** Answers each `flush` with the next scripted error (null: the queue is empty), on a later turn. */
function scriptedProducer(answers: (LibrdKafkaError | null)[], fallback: LibrdKafkaError | null = TIMED_OUT) {
  const slices: number[] = [];
  const producer = {
    flush(timeoutMs: number, callback: (error: LibrdKafkaError | null) => void) {
      slices.push(timeoutMs);
      const answer = answers.length > 0 ? answers.shift()! : fallback;
      setImmediate(() => callback(answer));
      return producer;
    },
  };
  return { producer: producer as unknown as Producer, slices };
}

function queueOf(producer: Producer): ProducerQueue {
  return new ProducerQueue(producer, new DeliveryTracker(false, () => 0), 1_000, () => undefined);
}

describe('ProducerQueue.flush', () => {
  it('flushes in 1 ms slices until one finds the queue empty', async () => {
    const { producer, slices } = scriptedProducer([TIMED_OUT, TIMED_OUT, TIMED_OUT, null]);
    await queueOf(producer).flush('checkpoint flush', 5_000);
    expect(slices).toEqual([1, 1, 1, 1]);
  });

  it('raises an error other than a timeout at once, classified and naming the operation', async () => {
    const fatal: LibrdKafkaError = { message: 'Broker: Producer fenced', code: -144, errno: -144, origin: 'kafka' };
    const { producer, slices } = scriptedProducer([TIMED_OUT, fatal]);
    const error = await queueOf(producer).flush('checkpoint flush', 5_000).catch((caught: unknown) => caught);
    expect(error).toMatchObject({ code: 'kafka.fenced', retriable: false });
    expect((error as Error).message).toMatch(/^checkpoint flush failed: Broker: Producer fenced/);
    expect(slices).toHaveLength(2);
  });

  it('gives up at its deadline while messages stay queued, with a retriable error', async () => {
    const { producer, slices } = scriptedProducer([]);
    const started = Date.now();
    const error = await queueOf(producer).flush('checkpoint flush', 30).catch((caught: unknown) => caught);
    expect(Date.now() - started).toBeGreaterThanOrEqual(30);
    expect(slices.length).toBeGreaterThan(1);
    expect(error).toMatchObject({ retriable: true });
    expect((error as Error).message).toMatch(/^checkpoint flush failed: Local: Timed out/);
  });
});
