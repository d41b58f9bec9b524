import { once } from 'node:events';

import type { MessageHeader, MessageKey, Producer } from 'node-rdkafka';

/** librdkafka's RD_KAFKA_RESP_ERR__QUEUE_FULL: the local send queue is full — back-pressure, not failure. */
const ERR_QUEUE_FULL = -184;

export interface OutgoingRecord {
  topic: string;
  partition?: number | null;
  value: Buffer;
  key?: MessageKey;
  timestamp?: number | null;
  headers?: MessageHeader[];
}

/**
 * `produce`, waiting for a delivery report whenever the local queue is full and trying again.
 * Needs a producer with `dr_cb` on and polling (see connectProducer), else no report comes.
 */
export async function produceWithBackpressure(producer: Producer, record: OutgoingRecord): Promise<void> {
  for (;;) {
    try {
      producer.produce(record.topic, record.partition ?? null, record.value, record.key, record.timestamp ?? null, undefined, record.headers);
      return;
    } catch (error) {
      if ((error as { code?: number }).code !== ERR_QUEUE_FULL) throw error;
      await once(producer, 'delivery-report');
    }
  }
}
