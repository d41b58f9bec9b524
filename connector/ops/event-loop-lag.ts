/**
 * Event-loop lag from Node's `monitorEventLoopDelay` (perf_hooks): how late the loop ran a timer. A
 * busy loop delays consumption, heartbeats and scrapes alike, so the soak test and the metrics watch it.
 */
import { monitorEventLoopDelay } from 'node:perf_hooks';

/** The parts of perf_hooks' IntervalHistogram read here; values in nanoseconds. */
export interface DelayHistogram {
  enable(): unknown;
  disable(): unknown;
  reset(): void;
  percentile(percentile: number): number;
  readonly max: number;
  readonly count: number;
}

export interface LoopLagWindow {
  readonly p99Seconds: number;
  readonly maxSeconds: number;
  /** Timer samples in the window; 0 means the window was too short to say anything. */
  readonly samples: number;
}

const NANOSECONDS_PER_SECOND = 1e9;

/**
 * Delay statistics over windows: each `take()` reads the window since the previous one and starts the
 * next. Node records the whole interval between timer runs, so an idle loop reads about the resolution
 * (measured on Node 20: ≈ 20 ms at resolution 20 ms); the resolution is subtracted to leave the lag.
 */
export class EventLoopLag {
  private readonly histogram: DelayHistogram;

  /**
   * @param resolutionMs sampling interval of the monitor (default 20 ms); finer costs more wake-ups.
   * @param histogram injected in tests; by default perf_hooks' monitor at that resolution.
   */
  constructor(
    private readonly resolutionMs = 20,
    histogram?: DelayHistogram,
  ) {
    this.histogram = histogram ?? monitorEventLoopDelay({ resolution: resolutionMs });
  }

  start(): void {
    this.histogram.enable();
  }

  stop(): void {
    this.histogram.disable();
  }

  take(): LoopLagWindow {
    const { count } = this.histogram;
    const window =
      count === 0
        ? { p99Seconds: 0, maxSeconds: 0, samples: 0 }
        : { p99Seconds: this.lagSeconds(this.histogram.percentile(99)), maxSeconds: this.lagSeconds(this.histogram.max), samples: count };
    this.histogram.reset();
    return window;
  }

  private lagSeconds(nanoseconds: number): number {
    return Math.max(0, nanoseconds - this.resolutionMs * 1e6) / NANOSECONDS_PER_SECOND;
  }
}
