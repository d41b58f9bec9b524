/**
 * The rate cap on synthetic records: a token bucket refilled at `perSecond` tokens per second up to
 * `burst` tokens, one token per synthetic record. It only decides; the caller waits or thins. Over any
 * interval of τ seconds at most burst + perSecond·τ tokens are handed out (the token bucket bound), so no
 * one-second window sees more than perSecond + burst synthetic records.
 *
 * Two policies, as the `rateCap.whenExceeded` config chooses:
 * - `wait` (`acquire`): hands out the tokens there are now (up to the request) and says how long to wait
 *   for the next chunk. A chunk is at most `burst` tokens — a bucket never holds more — so a request larger
 *   than the burst is served in burst-sized chunks, one wait apart. The caller emits each granted chunk,
 *   waits (consumption paused) and asks again with the remainder until nothing remains: nothing is skipped.
 * - `thin` (`thin`): hands out min(request, tokens there are now) and reports the rest as thinned.
 */
import { RaretideError, UsageError } from '../../config/errors.js';

/** Milliseconds on any monotonic scale; `() => performance.now()` in production, a fake in tests. */
export interface Clock {
  now(): number;
}

export interface TokenBucketOptions {
  /** Steady rate of synthetic records per second (> 0). */
  readonly perSecond: number;
  /** Bucket size: synthetic records allowed at once above the steady rate (a whole number ≥ 1). */
  readonly burst: number;
}

/** The `wait` policy's answer. */
export interface WaitDecision {
  /** Tokens taken now: emit this many synthetic records now. */
  readonly granted: number;
  /** Milliseconds until the next chunk (min(remainder, burst)) is available; 0 when nothing remains. */
  readonly waitMs: number;
}

/** The `thin` policy's answer. */
export interface ThinDecision {
  /** Tokens taken now: emit this many synthetic records. */
  readonly granted: number;
  /** Synthetic records not made for lack of tokens: request − granted. */
  readonly thinned: number;
}

/**
 * Slack when turning a fractional token level into whole tokens: refill arithmetic on doubles can leave
 * 2.9999999999 where the clock says 3 tokens are due.
 */
const EPSILON = 1e-9;

export class TokenBucket {
  private readonly perSecond: number;
  private readonly burst: number;
  private level: number;
  private refilledAt: number;

  /** Starts full, so a fresh worker may emit one burst at once. */
  constructor(
    options: TokenBucketOptions,
    private readonly clock: Clock,
  ) {
    if (!(Number.isFinite(options.perSecond) && options.perSecond > 0)) {
      throw new UsageError(`rateCap.perSecond must be a number of synthetic records per second > 0, got ${options.perSecond}.`);
    }
    if (!Number.isInteger(options.burst) || options.burst < 1) {
      throw new UsageError(`rateCap.burst must be a whole number ≥ 1, got ${options.burst}.`);
    }
    this.perSecond = options.perSecond;
    this.burst = options.burst;
    this.level = options.burst;
    this.refilledAt = clock.now();
  }

  /** Whole tokens available now. */
  available(): number {
    this.refill();
    return wholeTokens(this.level);
  }

  /** Policy `wait`: takes what there is now of `wanted`, and says how long until the next chunk. */
  acquire(wanted: number): WaitDecision {
    checkRequest(wanted);
    const granted = this.take(wanted);
    const remaining = wanted - granted;
    if (remaining === 0) return { granted, waitMs: 0 };
    const nextChunk = Math.min(remaining, this.burst);
    return { granted, waitMs: Math.ceil(((nextChunk - this.level) * 1000) / this.perSecond) };
  }

  /** Policy `thin`: takes what there is now of `wanted`; the rest is thinned. */
  thin(wanted: number): ThinDecision {
    checkRequest(wanted);
    const granted = this.take(wanted);
    return { granted, thinned: wanted - granted };
  }

  private take(wanted: number): number {
    this.refill();
    const granted = Math.min(wanted, wholeTokens(this.level));
    this.level = Math.max(0, this.level - granted);
    return granted;
  }

  /** Adds the tokens earned since the last refill; a clock that steps back earns nothing. */
  private refill(): void {
    const now = this.clock.now();
    if (now > this.refilledAt) {
      this.level = Math.min(this.burst, this.level + ((now - this.refilledAt) * this.perSecond) / 1000);
      this.refilledAt = now;
    }
  }
}

function wholeTokens(level: number): number {
  return Math.floor(level + EPSILON);
}

function checkRequest(wanted: number): void {
  if (!Number.isInteger(wanted) || wanted < 0) {
    throw new RaretideError('rate-cap.bad-request', `A token request must be a whole number ≥ 0, got ${wanted}.`);
  }
}
