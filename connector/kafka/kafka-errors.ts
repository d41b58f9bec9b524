/**
 * node-rdkafka errors → RaretideError, so callers decide retry, abort or stop from `code` and
 * `retriable`. Classified by librdkafka's error code where one is set; many errors (delivery reports,
 * flush, `event.error`) arrive with code −1 and only a message, so those fall back to the message text
 * (NODE-RDKAFKA.md, "Errors"). The raw librdkafka text is always kept in the message and as `cause`.
 */
import Kafka from 'node-rdkafka';

import { RaretideError } from '../../config/errors.js';

export type KafkaErrorKind =
  | 'fenced'
  | 'fatal'
  | 'transaction-abort'
  | 'transport'
  | 'queue-full'
  | 'auth'
  | 'unknown-topic'
  | 'record-too-large'
  | 'invalid-config'
  | 'error';

interface KindRule {
  readonly retriable: boolean;
  /** What the user can do about it, appended to the message. */
  readonly fix?: string;
}

const RULES: Readonly<Record<KafkaErrorKind, KindRule>> = {
  fenced: {
    retriable: false,
    fix: 'another producer took over this transactional id: give every worker replica its own stable instance id',
  },
  fatal: { retriable: false, fix: 'the client cannot continue; restart the worker' },
  'transaction-abort': { retriable: true, fix: 'the transaction must be aborted and the batch processed again' },
  transport: { retriable: true },
  'queue-full': { retriable: true },
  auth: { retriable: false, fix: 'check the security properties in kafka.settings (security.protocol, sasl.*, ssl.*) and the ACLs' },
  'unknown-topic': { retriable: false, fix: 'create the topic, or correct its name in the config' },
  'record-too-large': { retriable: false, fix: "raise the topic's max.message.bytes (and the producer's message.max.bytes) or send smaller records" },
  'invalid-config': { retriable: false, fix: 'correct the librdkafka property in kafka.settings' },
  error: { retriable: false },
};

/**
 * librdkafka error names per kind, resolved to codes through node-rdkafka's own table (generated from
 * librdkafka 2.12.0's rdkafkacpp.h), so no number is copied by hand.
 */
export const ERROR_NAMES_BY_KIND: Readonly<Partial<Record<KafkaErrorKind, readonly string[]>>> = {
  fenced: ['ERR__FENCED', 'ERR_INVALID_PRODUCER_EPOCH', 'ERR_TRANSACTION_COORDINATOR_FENCED', 'ERR_FENCED_INSTANCE_ID', 'ERR_PRODUCER_FENCED'],
  fatal: ['ERR__FATAL'],
  transport: [
    'ERR__TRANSPORT', 'ERR__RESOLVE', 'ERR__MSG_TIMED_OUT', 'ERR__ALL_BROKERS_DOWN', 'ERR__TIMED_OUT', 'ERR__WAIT_COORD',
    'ERR__TIMED_OUT_QUEUE', 'ERR_LEADER_NOT_AVAILABLE', 'ERR_NOT_LEADER_FOR_PARTITION', 'ERR_REQUEST_TIMED_OUT',
    'ERR_BROKER_NOT_AVAILABLE', 'ERR_NETWORK_EXCEPTION', 'ERR_COORDINATOR_LOAD_IN_PROGRESS', 'ERR_COORDINATOR_NOT_AVAILABLE',
    'ERR_NOT_COORDINATOR', 'ERR_NOT_ENOUGH_REPLICAS', 'ERR_NOT_ENOUGH_REPLICAS_AFTER_APPEND', 'ERR_ILLEGAL_GENERATION',
    'ERR_UNKNOWN_MEMBER_ID', 'ERR_REBALANCE_IN_PROGRESS', 'ERR_CONCURRENT_TRANSACTIONS', 'ERR_THROTTLING_QUOTA_EXCEEDED',
  ],
  'queue-full': ['ERR__QUEUE_FULL'],
  auth: [
    'ERR__SSL', 'ERR__AUTHENTICATION', 'ERR_TOPIC_AUTHORIZATION_FAILED', 'ERR_GROUP_AUTHORIZATION_FAILED',
    'ERR_CLUSTER_AUTHORIZATION_FAILED', 'ERR_UNSUPPORTED_SASL_MECHANISM', 'ERR_ILLEGAL_SASL_STATE',
    'ERR_TRANSACTIONAL_ID_AUTHORIZATION_FAILED', 'ERR_SASL_AUTHENTICATION_FAILED',
  ],
  'unknown-topic': ['ERR__UNKNOWN_PARTITION', 'ERR__UNKNOWN_TOPIC', 'ERR_UNKNOWN_TOPIC_OR_PART'],
  'record-too-large': ['ERR_INVALID_MSG_SIZE', 'ERR_MSG_SIZE_TOO_LARGE', 'ERR_RECORD_LIST_TOO_LARGE'],
  'invalid-config': ['ERR__INVALID_ARG', 'ERR_INVALID_CONFIG'],
};

const LIBRDKAFKA_CODES = Kafka.CODES.ERRORS as unknown as Readonly<Record<string, number | undefined>>;

const KIND_BY_CODE: ReadonlyMap<number, KafkaErrorKind> = new Map(
  Object.entries(ERROR_NAMES_BY_KIND).flatMap(([kind, names]) =>
    (names ?? []).flatMap((name) => {
      const code = LIBRDKAFKA_CODES[name];
      return code === undefined ? [] : [[code, kind as KafkaErrorKind] as const];
    })),
);

/** For errors without a code: librdkafka's own texts (lower-cased by node-rdkafka for some paths). */
const KIND_BY_MESSAGE: readonly (readonly [RegExp, KafkaErrorKind])[] = [
  [/fenced|producer epoch/i, 'fenced'],
  [/fatal/i, 'fatal'],
  [/queue full/i, 'queue-full'],
  [/too large|invalid message size/i, 'record-too-large'],
  [/unknown topic|unknown partition/i, 'unknown-topic'],
  [/authenticat|authoriz|sasl|ssl/i, 'auth'],
  [/timed out|transport|connection|all brokers|broker.*(down|not available)|coordinator|not leader|rebalance/i, 'transport'],
];

/** The parts of a node-rdkafka error this module reads. */
interface RawKafkaError {
  readonly message?: unknown;
  readonly code?: unknown;
  readonly isFatal?: unknown;
  readonly isRetriable?: unknown;
  readonly isTxnRequiresAbort?: unknown;
}

export function kafkaErrorKind(error: unknown): KafkaErrorKind {
  const raw = (typeof error === 'object' && error !== null ? error : {}) as RawKafkaError;
  const code = typeof raw.code === 'number' ? raw.code : undefined;
  const byCode = code === undefined ? undefined : KIND_BY_CODE.get(code);
  // Fencing first: librdkafka flags it fatal too, and its fix is specific.
  if (byCode === 'fenced') return 'fenced';
  if (raw.isFatal === true) return 'fatal';
  if (raw.isTxnRequiresAbort === true) return 'transaction-abort';
  if (raw.isRetriable === true) return 'transport';
  if (byCode !== undefined) return byCode;
  const message = String(raw.message ?? error);
  return KIND_BY_MESSAGE.find(([pattern]) => pattern.test(message))?.[1] ?? 'error';
}

/**
 * `<operation> failed: <librdkafka text> (code <n>); <fix>` as a RaretideError with code `kafka.<kind>`.
 * An error that already is a RaretideError passes through unchanged.
 */
export function toKafkaError(operation: string, error: unknown): RaretideError {
  if (error instanceof RaretideError) return error;
  const kind = kafkaErrorKind(error);
  const rule = RULES[kind];
  const raw = (typeof error === 'object' && error !== null ? error : {}) as RawKafkaError;
  const text = String(raw.message ?? error);
  const code = typeof raw.code === 'number' && raw.code !== -1 ? ` (code ${raw.code})` : '';
  const fix = rule.fix === undefined ? '' : `; ${rule.fix}`;
  return new RaretideError(`kafka.${kind}`, `${operation} failed: ${text}${code}${fix}`, { retriable: rule.retriable, cause: error });
}
