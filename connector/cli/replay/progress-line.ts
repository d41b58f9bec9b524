import type { PipelineCounters } from '../../pipeline/accounting.js';
import type { Clock } from '../../pipeline/rate-limit.js';

/**
 * A progress line on stderr at most once per interval: records read, synthetic records made, the rate
 * and an ETA from the share of the input read so far (for a file, bytes read of its size).
 */
export class ProgressLine {
  private readonly started: number;
  private lastPrinted: number;

  constructor(
    private readonly write: (text: string) => void,
    private readonly clock: Clock,
    private readonly intervalMs = 1000,
  ) {
    this.started = clock.now();
    this.lastPrinted = this.started;
  }

  update(counters: PipelineCounters, fractionRead: number): void {
    const now = this.clock.now();
    if (now - this.lastPrinted < this.intervalMs) return;
    this.lastPrinted = now;
    this.write(`${progressText(counters.records, counters.total('synthetic'), now - this.started, fractionRead)}\n`);
  }
}

export function progressText(records: number, synthetic: number, elapsedMs: number, fractionRead: number): string {
  const rate = elapsedMs > 0 ? (records * 1000) / elapsedMs : 0;
  const fraction = Math.min(1, Math.max(0, fractionRead));
  const eta = fraction > 0 ? (elapsedMs * (1 - fraction)) / fraction : undefined;
  return (
    `replay: ${count(records)} records (${(fraction * 100).toFixed(0)} %), ${count(synthetic)} synthetic, ` +
    `${count(Math.round(rate))} records/s, ETA ${eta === undefined ? '?' : duration(eta)}`
  );
}

function count(value: number): string {
  return value.toLocaleString('en-US');
}

export function duration(ms: number): string {
  if (ms < 60_000) return `${(ms / 1000).toFixed(1)} s`;
  const minutes = Math.floor(ms / 60_000);
  return `${minutes} min ${Math.round((ms - minutes * 60_000) / 1000)} s`;
}
