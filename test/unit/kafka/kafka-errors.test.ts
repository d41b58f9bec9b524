import Kafka from 'node-rdkafka';
import { describe, expect, it } from 'vitest';

import { RaretideError } from '../../../config/errors.js';
import { ERROR_NAMES_BY_KIND, kafkaErrorKind, toKafkaError } from '../../../connector/kafka/kafka-errors.js';

const CODES = Kafka.CODES.ERRORS as unknown as Record<string, number | undefined>;

describe('node-rdkafka error classification', () => {
  it('names only librdkafka errors that exist (node-rdkafka\'s table from librdkafka 2.12.0)', () => {
    for (const names of Object.values(ERROR_NAMES_BY_KIND)) {
      for (const name of names ?? []) expect(CODES[name], name).toBeTypeOf('number');
    }
  });

  it.each([
    [{ code: CODES.ERR__FENCED, isFatal: true }, 'fenced', false],
    [{ code: CODES.ERR_PRODUCER_FENCED }, 'fenced', false],
    [{ code: -1, message: 'fatal error: producer fenced by newer instance' }, 'fenced', false],
    [{ code: CODES.ERR__STATE, isFatal: true }, 'fatal', false],
    [{ code: CODES.ERR__STATE, isTxnRequiresAbort: true }, 'transaction-abort', true],
    [{ code: CODES.ERR__STATE, isRetriable: true }, 'transport', true],
    [{ code: CODES.ERR__TRANSPORT }, 'transport', true],
    [{ code: CODES.ERR__QUEUE_FULL }, 'queue-full', true],
    [{ code: CODES.ERR_SASL_AUTHENTICATION_FAILED }, 'auth', false],
    [{ code: CODES.ERR_UNKNOWN_TOPIC_OR_PART }, 'unknown-topic', false],
    [{ code: CODES.ERR_MSG_SIZE_TOO_LARGE }, 'record-too-large', false],
    // Delivery reports and flush errors arrive with code −1 and lower-cased text (node-rdkafka lib/error.js).
    [{ code: -1, message: 'message size too large' }, 'record-too-large', false],
    [{ code: -1, message: 'message timed out' }, 'transport', true],
    [{ code: -1, message: 'unknown topic or partition' }, 'unknown-topic', false],
    [new Error('something nobody foresaw'), 'error', false],
  ] as const)('%o → %s', (raw, kind, retriable) => {
    expect(kafkaErrorKind(raw)).toBe(kind);
    const error = toKafkaError('commitTransaction', raw);
    expect(error).toBeInstanceOf(RaretideError);
    expect(error).toMatchObject({ code: `kafka.${kind}`, retriable });
    expect(error.message).toMatch(/^commitTransaction failed: /);
    expect(error.cause).toBe(raw);
  });

  it('keeps the raw text and code, adds the fix, and passes RaretideErrors through', () => {
    const error = toKafkaError('delivery to sink:0', { code: CODES.ERR_TOPIC_AUTHORIZATION_FAILED, message: 'Broker: Topic authorization failed' });
    expect(error.message).toBe(`delivery to sink:0 failed: Broker: Topic authorization failed (code ${CODES.ERR_TOPIC_AUTHORIZATION_FAILED}); check the security properties in kafka.settings (security.protocol, sasl.*, ssl.*) and the ACLs`);
    const already = new RaretideError('kafka.timeout', 'x', { retriable: true });
    expect(toKafkaError('anything', already)).toBe(already);
  });
});
