import { monitorEventLoopDelay } from 'node:perf_hooks';
import { describe, expect, it, vi } from 'vitest';
import { EventLoopLag, type DelayHistogram } from '../../../connector/ops/event-loop-lag.js';
import { RuntimeSampler, sampleRuntimeOnScrape } from '../../../connector/ops/runtime-sampler.js';
import { WorkerMetrics } from '../../../connector/ops/worker-metrics.js';

/** A histogram stand-in holding given delays in nanoseconds. */
function fixedHistogram(delaysNs: number[]): DelayHistogram & { resets: number } {
  const sorted = [...delaysNs].sort((a, b) => a - b);
  return {
    resets: 0,
    enable: () => true,
    disable: () => true,
    reset() {
      this.resets += 1;
      sorted.length = 0;
    },
    percentile: (p) => sorted[Math.min(sorted.length - 1, Math.ceil((p / 100) * sorted.length) - 1)] ?? 0,
    get max() {
      return sorted.at(-1) ?? 0;
    },
    get count() {
      return sorted.length;
    },
  };
}

describe('EventLoopLag', () => {
  it('reports p99 and max minus the resolution, in seconds, and starts a new window', () => {
    const histogram = fixedHistogram([...Array.from({ length: 99 }, () => 20_500_000), 80_000_000]);
    const lag = new EventLoopLag(20, histogram);
    expect(lag.take()).toEqual({ p99Seconds: 0.0005, maxSeconds: 0.06, samples: 100 });
    expect(histogram.resets).toBe(1);
    expect(lag.take()).toEqual({ p99Seconds: 0, maxSeconds: 0, samples: 0 });
  });

  it('never reports a negative lag when a timer ran early', () => {
    const lag = new EventLoopLag(20, fixedHistogram([19_000_000]));
    expect(lag.take()).toMatchObject({ p99Seconds: 0, maxSeconds: 0 });
  });

  it('sees a 100 ms block of the real event loop', async () => {
    const histogram = monitorEventLoopDelay({ resolution: 10 });
    const lag = new EventLoopLag(10, histogram);
    lag.start();
    try {
      // The monitor's first interval starts with its first tick; block only after it.
      await vi.waitFor(() => expect(histogram.count).toBeGreaterThan(0), { timeout: 2_000, interval: 5 });
      const blockUntil = performance.now() + 100;
      while (performance.now() < blockUntil);
      await vi.waitFor(() => expect(histogram.max).toBeGreaterThan(80e6), { timeout: 2_000, interval: 10 });
      expect(lag.take().maxSeconds).toBeGreaterThan(0.07);
    } finally {
      lag.stop();
    }
  });
});

describe('RuntimeSampler', () => {
  it('feeds RSS and loop lag into the worker gauges at every scrape', () => {
    const metrics = new WorkerMetrics();
    let rss = 100_000_000;
    const sampler = new RuntimeSampler(new EventLoopLag(20, fixedHistogram([25_000_000])), () => (rss += 4096));
    sampleRuntimeOnScrape(metrics, sampler);
    const text = metrics.registry.render();
    expect(text).toContain('raretide_process_resident_memory_bytes 100004096\n');
    expect(text).toContain('raretide_event_loop_lag_max_seconds 0.005\n');
    expect(metrics.registry.render()).toContain('raretide_process_resident_memory_bytes 100008192\n');
  });
});
