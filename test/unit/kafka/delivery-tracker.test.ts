import type { DeliveryReport as RdDeliveryReport, LibrdKafkaError } from 'node-rdkafka';
import { describe, expect, it } from 'vitest';

import { DeliveryTracker } from '../../../connector/kafka/delivery-tracker.js';
import type { DeliveryReport, OutputMessage } from '../../../connector/pipeline/source-sink.js';

/** Shapes as node-rdkafka hands them over: delivery errors carry text and code −1 (its lib/error.js). */
const report = (opaque?: OutputMessage): RdDeliveryReport => ({ topic: 'sink', partition: 1, offset: -1, size: 10, ...(opaque ? { opaque } : {}) });
const error = (message: string): LibrdKafkaError => ({ message, code: -1, errno: -1, origin: 'local' });
const message: OutputMessage = { route: 'output', value: Buffer.from('x'), key: null, headers: [], timestamp: undefined, source: { topic: 'src', partition: 0, offset: 7n } };

describe('DeliveryTracker', () => {
  it('sums failures since the last reset into one error that keeps the first one\'s code', () => {
    const tracker = new DeliveryTracker(false, () => 0);
    for (let i = 0; i < 4; i++) tracker.countSent();
    tracker.onReport(error('message size too large'), report());
    tracker.onReport(error('message timed out'), report());
    const failure = tracker.failure()!;
    expect(failure).toMatchObject({ code: 'kafka.record-too-large', retriable: false });
    expect(failure.message).toBe('2 of 4 messages sent since the last checkpoint were not delivered: delivery to sink:1 failed: message size too large; raise the topic\'s max.message.bytes (and the producer\'s message.max.bytes) or send smaller records; other failures: delivery to sink:1 failed: message timed out');
    tracker.reset();
    expect(tracker.failure()).toBeUndefined();
  });

  it('does not count messages purged by an aborted transaction as failures', () => {
    const tracker = new DeliveryTracker(false, () => 0);
    tracker.countSent();
    tracker.countSent();
    tracker.onReport(error('purged in queue'), report());
    tracker.onReport(error('purged in flight'), report());
    expect(tracker.failure()).toBeUndefined();
  });

  it('with a report per message, settles once every sent message is reported and tells listeners', async () => {
    const tracker = new DeliveryTracker(true, () => 1_234);
    const heard: DeliveryReport[] = [];
    tracker.addListener((delivery) => heard.push(delivery));
    tracker.countSent();
    tracker.countSent();
    tracker.onReport(null, report(message));
    let settled = false;
    const waiting = tracker.settled(5_000).then(() => { settled = true; });
    await Promise.resolve();
    expect(settled).toBe(false);
    tracker.onReport(null, report());
    await waiting;
    expect(heard).toEqual([{ message, deliveredAt: 1_234, error: undefined }]);
  });

  it('gives up waiting for reports at the deadline with a retriable error', async () => {
    const tracker = new DeliveryTracker(true, () => 0);
    tracker.countSent();
    await expect(tracker.settled(20)).rejects.toMatchObject({ code: 'kafka.timeout', retriable: true });
  });
});
