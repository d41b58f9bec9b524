import Kafka, {
  type ConsumerGlobalConfig,
  type ConsumerTopicConfig,
  type KafkaConsumer,
  type LibrdKafkaError,
  type Producer,
  type ProducerGlobalConfig,
} from 'node-rdkafka';

/** Turns node-rdkafka's `(error) => void` callbacks into promises, keeping the error's text. */
export function settle(what: string, start: (done: (error?: LibrdKafkaError | null) => void) => void): Promise<void> {
  return new Promise((resolve, reject) => {
    start((error) => {
      if (error) reject(new Error(`${what} failed: ${error.message} (code ${error.code})`));
      else resolve();
    });
  });
}

/**
 * A connected producer that polls for delivery reports (without polling they never arrive).
 * `dr_cb` is on so `delivery-report` events fire; the payload is not copied back.
 */
export async function connectProducer(config: ProducerGlobalConfig): Promise<Producer> {
  const producer = new Kafka.Producer({ dr_cb: true, ...config });
  await new Promise<void>((resolve, reject) => {
    producer.connect({ timeout: 30_000 }, (error) => (error ? reject(new Error(`producer connect failed: ${error.message}`)) : resolve()));
  });
  producer.setPollInterval(20);
  return producer;
}

/**
 * A connected consumer with a short consume timeout, so a `consume(n)` loop notices its
 * deadline promptly. Auto-commit is off unless the caller turns it on.
 */
export async function connectConsumer(config: ConsumerGlobalConfig, topicConfig: ConsumerTopicConfig = {}): Promise<KafkaConsumer> {
  const consumer = new Kafka.KafkaConsumer({ 'enable.auto.commit': false, ...config }, { 'auto.offset.reset': 'earliest', ...topicConfig });
  await new Promise<void>((resolve, reject) => {
    consumer.connect({ timeout: 30_000 }, (error) => (error ? reject(new Error(`consumer connect failed: ${error.message}`)) : resolve()));
  });
  consumer.setDefaultConsumeTimeout(100);
  return consumer;
}

/** Flushes (checking the result — `disconnect` alone ignores flush errors), then disconnects. */
export async function flushAndDisconnect(producer: Producer, timeoutMs = 30_000): Promise<void> {
  await settle('producer flush', (done) => producer.flush(timeoutMs, done));
  await disconnect(producer);
}

export function disconnect(client: Producer | KafkaConsumer): Promise<void> {
  return new Promise((resolve, reject) => {
    client.disconnect((error: unknown) => (error ? reject(new Error(`disconnect failed: ${String(error)}`)) : resolve()));
  });
}
