import type { Message } from 'node-rdkafka';

import type { InputMessage } from '../pipeline/source-sink.js';

const NO_HEADERS: readonly never[] = Object.freeze([]);
const EMPTY_VALUE = Buffer.alloc(0);

/**
 * A consumed node-rdkafka message as the pipeline sees it. Headers stay as node-rdkafka gives them
 * (`{name: Buffer}` objects in wire order, duplicates kept); the offset becomes a bigint. A null value
 * (a tombstone) becomes an empty payload, which the decoder then reports as undecodable.
 */
export function toInputMessage(message: Message): InputMessage {
  return {
    topic: message.topic,
    partition: message.partition,
    offset: BigInt(message.offset),
    value: message.value ?? EMPTY_VALUE,
    key: typeof message.key === 'string' ? Buffer.from(message.key) : (message.key ?? null),
    headers: message.headers ?? NO_HEADERS,
    timestamp: message.timestamp === undefined || message.timestamp < 0 ? undefined : message.timestamp,
  };
}
