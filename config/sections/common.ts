import * as z from 'zod';

/**
 * Building blocks shared by several config sections. Each carries its own "expected …" message so a
 * config error reads as advice, not as a validator's internals.
 */

/** Avro names are `[A-Za-z_][A-Za-z0-9_]*` (Apache Avro specification, "Names"); paths join them with dots. */
const AVRO_NAME = '[A-Za-z_][A-Za-z0-9_]*';
const DOTTED_PATH = new RegExp(`^${AVRO_NAME}(\\.${AVRO_NAME})*$`);

/**
 * Kafka topic names: 1–249 characters from `[a-zA-Z0-9._-]`, and not `.` or `..`
 * (Apache Kafka, `org.apache.kafka.common.internals.Topic`; from memory).
 */
const TOPIC_NAME = /^(?!\.{1,2}$)[a-zA-Z0-9._-]{1,249}$/;

/** Largest seed: seeds feed a 32-bit PRNG state. */
const MAX_SEED = 2 ** 32 - 1;

export function nonEmptyString() {
  return z.string({ error: 'expected a non-empty string' }).min(1, { error: 'expected a non-empty string' });
}

export function topicName() {
  const error = 'expected a Kafka topic name: 1–249 characters from a-z A-Z 0-9 . _ -';
  return z.string({ error }).regex(TOPIC_NAME, { error });
}

export function dottedPath() {
  const error = 'expected a dotted path of Avro field names, e.g. reading.pressure';
  return z.string({ error }).regex(DOTTED_PATH, { error });
}

export function filePath() {
  return nonEmptyString();
}

/** A share of the output stream: strictly between 0 and 1. */
export function share() {
  const error = 'expected a share between 0 and 1 (exclusive)';
  return z.number({ error }).gt(0, { error }).lt(1, { error });
}

export function seed() {
  return z.int().min(0).max(MAX_SEED);
}

export function positiveInt() {
  return z.int().min(1);
}
