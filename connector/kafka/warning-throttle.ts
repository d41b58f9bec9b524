/**
 * librdkafka reports a broker outage once per connection and per request, so one outage arrives as
 * dozens of identical client errors within milliseconds, then again on every retry. The throttle lets
 * the first of each distinct message through and holds the repeats for `windowMs`; the next one after
 * that goes through with the number held back (`repeats`), so the log shows the outage once every window
 * and loses no count.
 */
import type { KafkaLogEntry, KafkaLogger } from './kafka-log.js';

/** @default 10 s: an outage reads as one line per client every 10 s. */
export const WARNING_WINDOW_MS = 10_000;

export class WarningThrottle {
  /** Per message: when it was last let through, and the repeats held back since. */
  private readonly seen = new Map<string, { shownAt: number; held: number }>();

  constructor(
    private readonly log: KafkaLogger,
    private readonly windowMs = WARNING_WINDOW_MS,
    private readonly now: () => number = Date.now,
  ) {}

  /** Logs `entry`, or counts it when the same text was let through less than `windowMs` ago. */
  warn(entry: KafkaLogEntry): void {
    const key = `${entry.message}\n${entry.error?.message ?? ''}`;
    const at = this.now();
    const last = this.seen.get(key);
    if (last !== undefined && at - last.shownAt < this.windowMs) {
      last.held += 1;
      return;
    }
    const repeats = last?.held ?? 0;
    this.seen.set(key, { shownAt: at, held: 0 });
    this.log(repeats === 0 ? entry : { ...entry, fields: { ...entry.fields, repeats } });
  }
}
