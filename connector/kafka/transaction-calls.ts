/**
 * One call of librdkafka's transaction API (init, sendOffsets, commit, abort) with the handling its
 * error flags ask for (NODE-RDKAFKA.md, "Transactions"; librdkafka's rdkafka.h on rd_kafka_error_t):
 * `isRetriable` → the same call again, with backoff, until the deadline; `isTxnRequiresAbort` → a
 * retriable `kafka.transaction-abort` (the caller aborts and processes the batch again); `isFatal` or no
 * flag at all → a fatal error: the producer cannot be used any more.
 */
import { setTimeout as delay } from 'node:timers/promises';

import { RaretideError } from '../../config/errors.js';
import { callbackPromise, DEADLINE_GRACE_MS } from './callback-promise.js';

interface TransactionErrorFlags {
  readonly isRetriable?: boolean;
  readonly isTxnRequiresAbort?: boolean;
  readonly isFatal?: boolean;
}

const BACKOFF_START_MS = 100;
const BACKOFF_MAX_MS = 2_000;

/**
 * Runs `call(timeoutMs, done)` as described above. `now` is the clock the deadline is kept on.
 * Errors thrown are RaretideErrors: `retriable` means "abort the transaction and try the batch again".
 */
export async function transactionCall(
  operation: string,
  timeoutMs: number,
  call: (timeoutMs: number, done: (error: unknown) => void) => void,
  now: () => number = Date.now,
): Promise<void> {
  const deadline = now() + timeoutMs;
  for (let attempt = 0; ; attempt++) {
    try {
      await callbackPromise(operation, timeoutMs + DEADLINE_GRACE_MS, (done) => call(timeoutMs, done));
      return;
    } catch (error) {
      const flags = flagsOf(error);
      if (flags.isFatal !== true && flags.isRetriable === true && now() < deadline) {
        await delay(Math.min(BACKOFF_MAX_MS, BACKOFF_START_MS * 2 ** attempt));
        continue;
      }
      throw asTransactionError(operation, error as RaretideError, flags);
    }
  }
}

function asTransactionError(operation: string, error: RaretideError, flags: TransactionErrorFlags): RaretideError {
  if (error.code === 'kafka.fenced') return error;
  if (flags.isFatal === true) return new RaretideError('kafka.fatal', `${error.message}; the transactional producer cannot continue`, { retriable: false, cause: error });
  if (flags.isTxnRequiresAbort === true || flags.isRetriable === true) {
    return new RaretideError('kafka.transaction-abort', `${error.message}; the transaction must be aborted and the batch processed again`, { retriable: true, cause: error });
  }
  return new RaretideError('kafka.fatal', `${operation}: ${error.message}; an unflagged transaction error leaves the producer in an unknown state, so it is not used further`, { retriable: false, cause: error });
}

function flagsOf(error: unknown): TransactionErrorFlags {
  const cause = error instanceof RaretideError ? error.cause : error;
  return (typeof cause === 'object' && cause !== null ? cause : {}) as TransactionErrorFlags;
}
