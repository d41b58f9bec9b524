/**
 * vitest global setup of the `integration` project: finds a real Kafka broker for the tests.
 *   1. KAFKA_BROKERS set        → that cluster, as is;
 *   2. a reachable Docker engine → a broker container through testcontainers;
 *   3. Java 17+ and Maven        → the local broker of deploy/kafka (jars cached outside the repo);
 *   4. none of these             → fail, naming the three ways. Integration tests never skip.
 * The address reaches tests as `inject('kafkaBrokers')` and process.env.KAFKA_BROKERS.
 */
import type { TestProject } from 'vitest/node';

import { startLocalBroker } from '../../deploy/kafka/local-broker.js';
import { missingLocalBrokerPrerequisites } from '../../deploy/kafka/prerequisites.js';

import { isDockerReachable, startDockerBroker } from './docker-kafka.js';

interface ProvidedBroker {
  brokers: string;
  description: string;
  stop(): Promise<void>;
}

const DOCKER_PROBE_TIMEOUT_MS = 5_000;

async function provideBroker(): Promise<ProvidedBroker> {
  const fromEnv = process.env.KAFKA_BROKERS?.trim();
  if (fromEnv) {
    return { brokers: fromEnv, description: `KAFKA_BROKERS=${fromEnv} (existing cluster)`, stop: async () => undefined };
  }
  if (await isDockerReachable(DOCKER_PROBE_TIMEOUT_MS)) {
    const started = Date.now();
    const broker = await startDockerBroker();
    return { brokers: broker.brokers, description: `Docker container ${broker.image} at ${broker.brokers} (ready in ${Date.now() - started} ms)`, stop: broker.stop };
  }
  const missing = await missingLocalBrokerPrerequisites();
  if (missing.length === 0) {
    const broker = await startLocalBroker();
    const { jarsMs, formatMs, readyMs } = broker.timings;
    return {
      brokers: broker.brokers,
      description: `local Apache Kafka broker at ${broker.brokers}, pid ${broker.pid} (jars ${jarsMs} ms, format ${formatMs} ms, ready ${readyMs} ms)`,
      stop: broker.stop,
    };
  }
  throw new Error([
    'integration tests need a Kafka broker, and none of the three ways to get one is available:',
    '  1. set KAFKA_BROKERS=host:port of an existing cluster (the tests create and delete their own topics);',
    '  2. start a Docker engine reachable by testcontainers (DOCKER_HOST or the default socket);',
    `  3. install ${missing.join(' and ')} for the local broker of deploy/kafka.`,
  ].join('\n'));
}

export default async function setup(project: TestProject): Promise<() => Promise<void>> {
  const broker = await provideBroker();
  console.log(`[raretide tests] Kafka broker: ${broker.description}`);
  process.env.KAFKA_BROKERS = broker.brokers;
  project.provide('kafkaBrokers', broker.brokers);
  return broker.stop;
}
