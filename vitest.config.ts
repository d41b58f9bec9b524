import { defineConfig } from 'vitest/config';

// Two projects: `unit` needs nothing but Node; `integration` gets a real Kafka broker from
// test/support/broker-provider.ts (KAFKA_BROKERS, else Docker via testcontainers, else the local
// Maven-fetched broker), which exports its address to the tests as KAFKA_BROKERS.
export default defineConfig({
  test: {
    projects: [
      {
        test: {
          name: 'unit',
          include: ['test/unit/**/*.test.ts'],
          testTimeout: 60_000,
          // Several files fit a small model in beforeAll: seconds alone, far more on a busy 2-core machine.
          hookTimeout: 120_000,
        },
      },
      {
        test: {
          name: 'integration',
          include: ['test/integration/**/*.test.ts'],
          globalSetup: ['test/support/broker-provider.ts'],
          testTimeout: 180_000,
          hookTimeout: 180_000,
          // One broker on 2 cores: run integration files one at a time.
          fileParallelism: false,
        },
      },
    ],
  },
});
