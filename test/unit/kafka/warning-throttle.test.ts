import { describe, expect, it } from 'vitest';

import { RaretideError } from '../../../config/errors.js';
import type { KafkaLogEntry } from '../../../connector/kafka/kafka-log.js';
import { WarningThrottle } from '../../../connector/kafka/warning-throttle.js';

const down = (text: string): KafkaLogEntry => ({
  level: 'warn',
  message: 'consumer client error (librdkafka retries on its own)',
  error: new RaretideError('kafka.transport', text, { retriable: true }),
});

describe('warning throttle', () => {
  it('lets the first of a burst through and reports the repeats held back with the next one after the window', () => {
    const logged: KafkaLogEntry[] = [];
    let now = 0;
    const throttle = new WarningThrottle((entry) => logged.push(entry), 10_000, () => now);
    // An outage as a log of 2026-12-02 showed it: dozens of the same two errors within milliseconds.
    for (let index = 0; index < 40; index++) throttle.warn(down(index % 2 === 0 ? 'all broker connections are down' : 'broker transport failure'));
    expect(logged.map((entry) => entry.error?.message)).toEqual(['all broker connections are down', 'broker transport failure']);
    now = 9_999;
    throttle.warn(down('all broker connections are down'));
    expect(logged).toHaveLength(2);
    now = 10_000;
    throttle.warn(down('all broker connections are down'));
    expect(logged).toHaveLength(3);
    expect(logged[2]!.fields).toEqual({ repeats: 20 });
    // Nothing held since: the next line after another window carries no count.
    now = 20_000;
    throttle.warn(down('all broker connections are down'));
    expect(logged[3]!.fields).toBeUndefined();
  });
});
