import { randomBytes } from 'node:crypto';

export interface ServerPropertiesInput {
  clientPort: number;
  controllerPort: number;
  logDir: string;
}

/**
 * server.properties for one KRaft node acting as broker and controller on 127.0.0.1.
 * The replication-factor-1 settings are what a single broker needs: with Kafka's defaults
 * (3) the consumer-offsets and transaction-state topics cannot be created, and
 * `initTransactions` waits until it times out.
 */
export function renderServerProperties({ clientPort, controllerPort, logDir }: ServerPropertiesInput): string {
  const settings: Record<string, string | number> = {
    'process.roles': 'broker,controller',
    'node.id': 1,
    'controller.quorum.voters': `1@127.0.0.1:${controllerPort}`,
    // An explicit 127.0.0.1: an empty host would bind every interface.
    listeners: `PLAINTEXT://127.0.0.1:${clientPort},CONTROLLER://127.0.0.1:${controllerPort}`,
    'advertised.listeners': `PLAINTEXT://127.0.0.1:${clientPort},CONTROLLER://127.0.0.1:${controllerPort}`,
    'inter.broker.listener.name': 'PLAINTEXT',
    'controller.listener.names': 'CONTROLLER',
    'listener.security.protocol.map': 'CONTROLLER:PLAINTEXT,PLAINTEXT:PLAINTEXT',
    'log.dirs': logDir,
    'offsets.topic.replication.factor': 1,
    'offsets.topic.num.partitions': 1,
    'transaction.state.log.replication.factor': 1,
    'transaction.state.log.min.isr': 1,
    'transaction.state.log.num.partitions': 1,
    'share.coordinator.state.topic.replication.factor': 1,
    'share.coordinator.state.topic.min.isr': 1,
    // Tests join fresh groups constantly; the default 3 s delay would stall every one of them.
    'group.initial.rebalance.delay.ms': 0,
  };
  return Object.entries(settings).map(([key, value]) => `${key}=${value}`).join('\n') + '\n';
}

/**
 * A random cluster id in Kafka's Uuid text form: 16 random bytes, URL-safe base64 without
 * padding. Kafka's own generator re-draws ids starting with '-' (they read as command-line
 * options), and so do we. Generating it here saves a JVM start of `StorageTool random-uuid`.
 */
export function randomClusterId(random: (size: number) => Buffer = randomBytes): string {
  for (;;) {
    const id = random(16).toString('base64url');
    if (!id.startsWith('-')) return id;
  }
}
