/**
 * librdkafka properties for raretide's clients, built from the `kafka` config section. The user's
 * `kafka.settings` (security, timeouts) go in first and raretide's own properties on top, so the ones
 * the delivery guarantee depends on cannot be overridden by accident (the config schema refuses those
 * keys anyway, naming the field to set instead).
 */
import type { ConsumerGlobalConfig, ProducerGlobalConfig } from 'node-rdkafka';

import type { KafkaConfig } from '../../config/schema.js';
import { namesSecret, REDACTED } from '../../config/secret-names.js';

export type DeliveryGuarantee = 'at-least-once' | 'exactly-once';

/** A librdkafka property value as the config accepts it. */
export type SettingValue = string | number | boolean;
export type ClientSettings = Readonly<Record<string, SettingValue>>;

/** The prefix of every client id, so broker logs and quotas can tell raretide's connections apart. */
const CLIENT_ID_PREFIX = 'raretide';

function baseSettings(kafka: KafkaConfig, clientId: string): Record<string, SettingValue> {
  return {
    ...kafka.settings,
    'bootstrap.servers': kafka.brokers.replace(/\s+/g, ''),
    'client.id': clientId,
  };
}

/** `raretide-<role>-<group>`: shows in broker logs and in `kafka-consumer-groups` output. */
export function clientIdFor(role: string, group: string): string {
  return `${CLIENT_ID_PREFIX}-${role}-${group}`;
}

/**
 * The compacted topic holding the balance counts of a consumer group's partitions when
 * `delivery.stateTopic` is not set.
 */
export function defaultStateTopic(group: string): string {
  return `raretide-state.${group}`;
}

/**
 * `raretide.<group>.<instanceId>`. Since KIP-447 (Kafka 2.5) a transactional producer that sends its
 * offsets with the consumer's group metadata is fenced through the group generation, so the id need not
 * name input partitions; it only has to be unique per live replica and the same after a restart of that
 * replica. Then `initTransactions` of the restarted process fences its killed predecessor and aborts the
 * transaction it left open at once, instead of read_committed readers of the output waiting up to
 * `transaction.timeout.ms` for it. A stable instance id is e.g. a StatefulSet pod name; two live replicas
 * with the same id fence each other (a fatal error that names the id).
 */
export function transactionalIdFor(group: string, instanceId: string): string {
  return `${CLIENT_ID_PREFIX}.${group}.${instanceId}`;
}

export interface GroupConsumerSettingsOptions {
  readonly group: string;
  /**
   * Where a partition with no committed offset starts.
   * @default earliest
   */
  readonly startWithoutCommit?: 'earliest' | 'latest';
}

/**
 * The group consumer of `run`: offsets are committed only by the sink's checkpoints (never
 * automatically, never from the local offset store), cooperative-sticky assignment so a rebalance moves
 * only the partitions that change owner, and read_committed so records of aborted transactions upstream
 * are never consumed. `enable.partition.eof` makes `consume(n)` return as soon as it has drained what is
 * ready instead of waiting for `n` records (node-rdkafka's batch worker drops to a 1 ms wait after an
 * end-of-partition event), which keeps batch latency low on a live topic.
 */
export function groupConsumerSettings(kafka: KafkaConfig, options: GroupConsumerSettingsOptions): { global: ConsumerGlobalConfig; topic: Record<string, SettingValue> } {
  return {
    global: {
      ...baseSettings(kafka, clientIdFor('consumer', options.group)),
      'group.id': options.group,
      'enable.auto.commit': false,
      'enable.auto.offset.store': false,
      'partition.assignment.strategy': 'cooperative-sticky',
      'isolation.level': 'read_committed',
      'enable.partition.eof': true,
      offset_commit_cb: true,
    } as ConsumerGlobalConfig,
    topic: { 'auto.offset.reset': options.startWithoutCommit ?? 'earliest' },
  };
}

/**
 * A consumer that only ever uses `assign()` (snapshots, state loading): librdkafka wants a group id for
 * any KafkaConsumer, but with no subscribe and no commit the group is never joined nor written.
 */
export function snapshotConsumerSettings(kafka: KafkaConfig, purpose: string, uniqueSuffix: string): ConsumerGlobalConfig {
  return {
    ...baseSettings(kafka, `${CLIENT_ID_PREFIX}-${purpose}`),
    'group.id': `${CLIENT_ID_PREFIX}-${purpose}-${uniqueSuffix}`,
    'enable.auto.commit': false,
    'enable.auto.offset.store': false,
    'isolation.level': 'read_committed',
    'enable.partition.eof': true,
  } as ConsumerGlobalConfig;
}

export interface ProducerSettingsOptions {
  readonly group: string;
  readonly guarantee: DeliveryGuarantee;
  /** Required for exactly-once: see `transactionalIdFor`. */
  readonly transactionalId?: string;
  /**
   * Ask for a delivery report for every message rather than for failures only.
   * @default false
   */
  readonly perMessageReports?: boolean;
}

/**
 * The sink's producer. Idempotence in both modes (no duplicates or reordering from librdkafka's own
 * retries; required by transactions). Delivery reports for failures only unless asked otherwise:
 * measured on this project's pass-through (test/bench/passthrough.ts), dispatching a JS report for every
 * message cost ~10 µs of main-thread time each and roughly halved throughput, while a checkpoint only
 * needs "did anything fail" after a flush.
 */
export function producerSettings(kafka: KafkaConfig, options: ProducerSettingsOptions): ProducerGlobalConfig {
  const settings: Record<string, SettingValue> = {
    ...baseSettings(kafka, clientIdFor('producer', options.group)),
    'enable.idempotence': true,
    dr_cb: true,
    'delivery.report.only.error': options.perMessageReports !== true,
  };
  if (options.guarantee === 'exactly-once') {
    if (options.transactionalId === undefined) throw new Error('exactly-once needs a transactional id (transactionalIdFor)');
    settings['transactional.id'] = options.transactionalId;
  }
  return settings as ProducerGlobalConfig;
}

/** For the AdminClient (topic creation) and metadata lookups. */
export function adminSettings(kafka: KafkaConfig, purpose = 'admin'): Record<string, SettingValue> {
  return baseSettings(kafka, `${CLIENT_ID_PREFIX}-${purpose}`);
}

/** What a secret value is shown as in logs. */
export { REDACTED };

/**
 * A copy of `settings` safe to log: values of secret-looking properties (`sasl.password`,
 * `ssl.key.password`, `ssl.key.pem`, `sasl.oauthbearer.client.secret`, anything with `secret`, `token`,
 * `password`…) are replaced by `[redacted]`; callbacks are shown as `[function]`.
 */
export function redactSettings(settings: Readonly<Record<string, unknown>>): Record<string, string> {
  const shown: Record<string, string> = {};
  for (const [name, value] of Object.entries(settings)) {
    if (typeof value === 'function') shown[name] = '[function]';
    else shown[name] = namesSecret(name) ? REDACTED : String(value);
  }
  return shown;
}
