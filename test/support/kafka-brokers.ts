import { inject } from 'vitest';

declare module 'vitest' {
  export interface ProvidedContext {
    /** Bootstrap address of the broker chosen by test/support/broker-provider.ts. */
    kafkaBrokers: string;
  }
}

/** The bootstrap address for integration tests; throws (never skips) when there is none. */
export function kafkaBrokers(): string {
  const brokers = inject('kafkaBrokers') || process.env.KAFKA_BROKERS;
  if (!brokers) {
    throw new Error('no Kafka broker for this test: run it in the `integration` vitest project (its global setup provides one) or set KAFKA_BROKERS');
  }
  return brokers;
}
