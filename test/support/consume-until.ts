import type { EofEvent, KafkaConsumer, Message, TopicPartition } from 'node-rdkafka';

export interface ConsumeUntilOptions {
  /** What is being waited for, for the timeout message. */
  what: string;
  /** @default 60000 */
  timeoutMs?: number;
  /** Messages asked for per `consume(n)` call. @default 500 */
  batchSize?: number;
}

/** One `consume(n)` call as a promise. */
export function consumeBatch(consumer: KafkaConsumer, batchSize: number): Promise<Message[]> {
  return new Promise((resolve, reject) => {
    consumer.consume(batchSize, (error, messages) => (error ? reject(new Error(`consume failed: ${error.message} (code ${error.code})`)) : resolve(messages)));
  });
}

/**
 * Runs a `consume(n)` batch loop until `done(received)` holds, calling `onBatch` after each
 * batch (e.g. to commit). Throws on the deadline, saying how far it got.
 */
export async function consumeUntil(
  consumer: KafkaConsumer,
  done: (received: readonly Message[]) => boolean,
  options: ConsumeUntilOptions & { onBatch?: (batch: Message[]) => void },
): Promise<Message[]> {
  const timeoutMs = options.timeoutMs ?? 60_000;
  const deadline = Date.now() + timeoutMs;
  const received: Message[] = [];
  while (!done(received)) {
    if (Date.now() >= deadline) {
      throw new Error(`timed out after ${timeoutMs} ms waiting for ${options.what}; received ${received.length} messages`);
    }
    const batch = await consumeBatch(consumer, options.batchSize ?? 500);
    received.push(...batch);
    if (batch.length > 0) options.onBatch?.(batch);
  }
  return received;
}

/** Consumes until at least `count` messages have arrived. */
export function consumeCount(consumer: KafkaConsumer, count: number, options: ConsumeUntilOptions & { onBatch?: (batch: Message[]) => void }): Promise<Message[]> {
  return consumeUntil(consumer, (received) => received.length >= count, options);
}

/**
 * Consumes until every one of `partitions` has reported end-of-partition, i.e. everything
 * visible to this consumer (under its isolation level) has been read. The consumer must have
 * `enable.partition.eof: true`.
 */
export async function consumeToEnd(consumer: KafkaConsumer, partitions: TopicPartition[], options: ConsumeUntilOptions): Promise<Message[]> {
  const atEnd = new Set<string>();
  const onEof = (eof: EofEvent) => atEnd.add(`${eof.topic}/${eof.partition}`);
  consumer.on('partition.eof', onEof);
  try {
    return await consumeUntil(consumer, () => partitions.every(({ topic, partition }) => atEnd.has(`${topic}/${partition}`)), options);
  } finally {
    consumer.removeListener('partition.eof', onEof);
  }
}
