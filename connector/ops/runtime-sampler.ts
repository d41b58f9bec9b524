/**
 * Process figures for the metrics and the soak test: resident memory and event-loop lag, read when
 * asked (at each scrape) rather than on a timer of their own.
 */
import type { EventLoopLag } from './event-loop-lag.js';
import type { WorkerMetrics } from './worker-metrics.js';

export interface RuntimeSample {
  readonly residentBytes: number;
  readonly loopLagP99Seconds: number;
  readonly loopLagMaxSeconds: number;
}

export class RuntimeSampler {
  /**
   * @param residentBytes the RSS reader (default `process.memoryUsage.rss`, which avoids walking the heap).
   */
  constructor(
    private readonly loopLag: EventLoopLag,
    private readonly residentBytes: () => number = () => process.memoryUsage.rss(),
  ) {}

  /** RSS now, and loop lag over the window since the previous sample. */
  sample(): RuntimeSample {
    const lag = this.loopLag.take();
    return { residentBytes: this.residentBytes(), loopLagP99Seconds: lag.p99Seconds, loopLagMaxSeconds: lag.maxSeconds };
  }
}

/** Refreshes the runtime gauges before every rendering of the worker's metrics. */
export function sampleRuntimeOnScrape(metrics: WorkerMetrics, sampler: RuntimeSampler): void {
  metrics.registry.beforeRender(() => metrics.setRuntime(sampler.sample()));
}
