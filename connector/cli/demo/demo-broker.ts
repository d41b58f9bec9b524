/**
 * The broker `raretide demo --kafka` talks to: the cluster KAFKA_BROKERS names, else a single-node
 * Apache Kafka the demo starts on 127.0.0.1 (deploy/kafka, as `npm run kafka:up` and the integration
 * tests use it) and stops at the end. A watchdog takes that broker down should the demo die without
 * stopping it, so no JVM outlives the demo.
 */
import { startLocalBroker } from '../../../deploy/kafka/local-broker.js';
import { missingLocalBrokerPrerequisites } from '../../../deploy/kafka/prerequisites.js';
import { UsageError } from '../../../config/errors.js';

export interface DemoBroker {
  readonly brokers: string;
  /** Where it came from, for the demo's output. */
  readonly description: string;
  readonly startedByDemo: boolean;
  /** Stops and removes a broker the demo started; leaves a given cluster alone. */
  stop(): Promise<void>;
}

export interface DemoBrokerEffects {
  readonly env: Readonly<Record<string, string | undefined>>;
  /** Lines about starting the broker (fetching jars on first use can take a while). */
  readonly log: (line: string) => void;
}

export async function demoBroker({ env, log }: DemoBrokerEffects): Promise<DemoBroker> {
  const given = env.KAFKA_BROKERS?.trim();
  if (given !== undefined && given !== '') {
    return { brokers: given, description: `the cluster at KAFKA_BROKERS=${given}`, startedByDemo: false, stop: () => Promise.resolve() };
  }
  const missing = await missingLocalBrokerPrerequisites();
  if (missing.length > 0) {
    throw new UsageError(
      `demo --kafka needs a broker: set KAFKA_BROKERS=host:port of a cluster, or install ${missing.join(' and ')} so the demo can start a local one; ` +
        'or run the demo without --kafka (no broker needed)',
    );
  }
  const broker = await startLocalBroker({ log });
  return {
    brokers: broker.brokers,
    description: `a local Apache Kafka broker the demo started at ${broker.brokers} (pid ${broker.pid}; stopped and removed at the end)`,
    startedByDemo: true,
    stop: () => broker.stop(),
  };
}
