/** Wall-clock time as a parameter, so probes and log lines are testable with a hand-moved clock. */
export interface Clock {
  /** Milliseconds since the epoch. */
  now(): number;
}

export const SYSTEM_CLOCK: Clock = { now: () => Date.now() };
