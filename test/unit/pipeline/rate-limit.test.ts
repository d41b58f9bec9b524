import { describe, expect, it } from 'vitest';
import { RaretideError, UsageError } from '../../../config/errors.js';
import { TokenBucket } from '../../../connector/pipeline/rate-limit.js';

function fakeClock(start = 0) {
  const clock = { time: start, now: () => clock.time };
  return clock;
}

/** Emissions of (time ms, count); the largest count in any window [t, t + 1000 ms) starting at an emission. */
function busiestSecond(emissions: readonly { at: number; count: number }[]): number {
  let busiest = 0;
  for (const start of emissions) {
    const inWindow = emissions.filter((e) => e.at >= start.at && e.at < start.at + 1000).reduce((sum, e) => sum + e.count, 0);
    busiest = Math.max(busiest, inWindow);
  }
  return busiest;
}

/** 10 s of demand at ten times the cap: 20 synthetic records wanted every 20 ms (1,000/s against 100/s). */
const DEMAND = Array.from({ length: 500 }, (_, index) => ({ at: index * 20, wanted: 20 }));
const CAP = { perSecond: 100, burst: 50 };

describe('TokenBucket — wait policy', () => {
  it('serves every request and no one-second window exceeds cap + burst under a 10× burst of demand', () => {
    const clock = fakeClock();
    const bucket = new TokenBucket(CAP, clock);
    const emissions: { at: number; count: number }[] = [];
    for (const request of DEMAND) {
      clock.time = Math.max(clock.time, request.at);
      let remaining = request.wanted;
      while (remaining > 0) {
        const decision = bucket.acquire(remaining);
        if (decision.granted > 0) emissions.push({ at: clock.time, count: decision.granted });
        remaining -= decision.granted;
        expect(decision.waitMs > 0).toBe(remaining > 0);
        clock.time += decision.waitMs; // consumption paused: the fake clock stands in for the wait
      }
    }
    const served = emissions.reduce((sum, e) => sum + e.count, 0);
    expect(served).toBe(DEMAND.length * 20);
    // Token bucket bound: at most burst + rate·τ in any interval of length τ (the (σ, ρ) arrival curve
    // of network calculus, Le Boudec & Thiran, "Network Calculus", ch. 1; from memory).
    expect(busiestSecond(emissions)).toBeLessThanOrEqual(CAP.perSecond + CAP.burst);
    // Pausing stretches 10,000 records over (10,000 − burst)/rate = 99.5 s.
    expect(clock.time).toBeGreaterThanOrEqual(99_500);
    expect(clock.time).toBeLessThan(99_500 + 20);
  });

  it('serves a request larger than the burst in burst-sized chunks, one refill apart', () => {
    const clock = fakeClock();
    const bucket = new TokenBucket(CAP, clock);
    const decisions = [];
    let remaining = 500;
    while (remaining > 0) {
      const decision = bucket.acquire(remaining);
      decisions.push(decision);
      remaining -= decision.granted;
      clock.time += decision.waitMs;
    }
    // A full bucket gives 50 now; each next 50 takes 50/100 s = 500 ms.
    expect(decisions.map((d) => d.granted)).toEqual(Array.from({ length: 10 }, () => 50));
    expect(decisions.map((d) => d.waitMs)).toEqual([...Array.from({ length: 9 }, () => 500), 0]);
  });

  it('waits exactly for the missing tokens (hand-computed)', () => {
    const clock = fakeClock(1_000);
    const bucket = new TokenBucket({ perSecond: 4, burst: 2 }, clock);
    expect(bucket.acquire(3)).toEqual({ granted: 2, waitMs: 250 }); // 1 token at 4/s = 250 ms
    clock.time += 250;
    expect(bucket.acquire(1)).toEqual({ granted: 1, waitMs: 0 });
    expect(bucket.acquire(0)).toEqual({ granted: 0, waitMs: 0 });
  });
});

describe('TokenBucket — thin policy', () => {
  it('grants what there is, counts what it removed, and keeps every second within cap + burst', () => {
    const clock = fakeClock();
    const bucket = new TokenBucket(CAP, clock);
    const emissions: { at: number; count: number }[] = [];
    let thinned = 0;
    for (const request of DEMAND) {
      clock.time = request.at;
      const decision = bucket.thin(request.wanted);
      expect(decision.granted + decision.thinned).toBe(request.wanted);
      thinned += decision.thinned;
      if (decision.granted > 0) emissions.push({ at: clock.time, count: decision.granted });
    }
    const granted = emissions.reduce((sum, e) => sum + e.count, 0);
    // Over 9.98 s: the burst plus 100/s of refill, whole tokens only.
    expect(granted).toBe(50 + 998);
    expect(thinned).toBe(10_000 - granted);
    expect(busiestSecond(emissions)).toBeLessThanOrEqual(CAP.perSecond + CAP.burst);
  });
});

describe('TokenBucket — arithmetic', () => {
  it('refills fractionally and counts only whole tokens', () => {
    const clock = fakeClock();
    const bucket = new TokenBucket({ perSecond: 3, burst: 3 }, clock);
    expect(bucket.thin(3)).toEqual({ granted: 3, thinned: 0 });
    clock.time = 333; // 0.999 tokens
    expect(bucket.available()).toBe(0);
    clock.time = 334;
    expect(bucket.available()).toBe(1);
    clock.time = 1000; // exactly 3 by the clock, whatever the double sums say
    expect(bucket.available()).toBe(3);
    clock.time = 60_000; // never above the burst
    expect(bucket.available()).toBe(3);
  });

  it('earns nothing when the clock steps back', () => {
    const clock = fakeClock(5_000);
    const bucket = new TokenBucket({ perSecond: 10, burst: 10 }, clock);
    bucket.thin(10);
    clock.time = 4_000;
    expect(bucket.available()).toBe(0);
    clock.time = 5_100;
    expect(bucket.available()).toBe(1);
  });

  it('rejects bad settings and requests, naming the field', () => {
    const clock = fakeClock();
    expect(() => new TokenBucket({ perSecond: 0, burst: 5 }, clock)).toThrow(UsageError);
    expect(() => new TokenBucket({ perSecond: 0, burst: 5 }, clock)).toThrow(/rateCap\.perSecond/);
    expect(() => new TokenBucket({ perSecond: 5, burst: 0.5 }, clock)).toThrow(/rateCap\.burst/);
    const bucket = new TokenBucket({ perSecond: 5, burst: 5 }, clock);
    expect(() => bucket.acquire(-1)).toThrow(RaretideError);
    expect(() => bucket.thin(1.5)).toThrow(/whole number/);
  });
});
