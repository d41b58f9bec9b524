/**
 * How long the worker waits before reconnecting after a retriable failure: doubling from `firstMs` up
 * to `longestMs` (exponential backoff, common practice for reconnects). librdkafka already retries single
 * requests with its own jittered backoff; this paces whole sessions, so a broker that is down is not
 * hammered with new connections.
 */
import { setTimeout as delay } from 'node:timers/promises';

export interface BackoffSettings {
  /** @default 1000 */
  readonly firstMs: number;
  /** @default 30000 */
  readonly longestMs: number;
}

export const DEFAULT_BACKOFF: BackoffSettings = { firstMs: 1_000, longestMs: 30_000 };

/** The wait before reconnect attempt `attempt` (0 for the first). */
export function backoffMs(attempt: number, settings: BackoffSettings): number {
  return Math.min(settings.longestMs, settings.firstMs * 2 ** Math.min(attempt, 30));
}

/** Waits `ms`, or less when `signal` aborts first; never rejects. */
export async function waitUnlessAborted(ms: number, signal: AbortSignal): Promise<void> {
  if (signal.aborted) return;
  await delay(ms, undefined, { signal }).catch(() => undefined);
}
