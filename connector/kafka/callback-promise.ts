/**
 * node-rdkafka's asynchronous calls take Node-style callbacks and some can hang (a broker that never
 * answers, a disconnect stuck in librdkafka). These wrap one call in a promise with a deadline.
 */
import { RaretideError } from '../../config/errors.js';
import { toKafkaError } from './kafka-errors.js';

/** Extra time beyond librdkafka's own timeout, so its (more precise) error normally wins the race. */
export const DEADLINE_GRACE_MS = 5_000;

/**
 * Runs `start` and settles with its callback: rejects with a classified RaretideError on a callback
 * error, and with a retriable `kafka.timeout` when no callback came within `deadlineMs`.
 */
export function callbackPromise<T = void>(
  operation: string,
  deadlineMs: number,
  start: (done: (error: unknown, value?: unknown) => void) => void,
): Promise<T> {
  return new Promise<T>((resolve, reject) => {
    let settled = false;
    const timer = setTimeout(() => {
      if (settled) return;
      settled = true;
      reject(new RaretideError('kafka.timeout', `${operation} did not finish within ${deadlineMs} ms; is the broker reachable?`, { retriable: true }));
    }, deadlineMs);
    const done = (error: unknown, value?: unknown) => {
      if (settled) return;
      settled = true;
      clearTimeout(timer);
      if (error !== null && error !== undefined) reject(toKafkaError(operation, error));
      else resolve(value as T);
    };
    try {
      start(done);
    } catch (error) {
      done(error);
    }
  });
}

/** Races `promise` against a deadline, for steps that have no callback of their own to wrap. */
export async function withDeadline<T>(operation: string, deadlineMs: number, promise: Promise<T>): Promise<T> {
  let timer: NodeJS.Timeout | undefined;
  const expired = new Promise<never>((_, reject) => {
    timer = setTimeout(
      () => reject(new RaretideError('kafka.timeout', `${operation} did not finish within ${deadlineMs} ms`, { retriable: true })),
      deadlineMs,
    );
  });
  try {
    return await Promise.race([promise, expired]);
  } finally {
    clearTimeout(timer);
  }
}
