/**
 * Consumer lag for the metrics, asked of the broker on a timer rather than per batch (each ask is a
 * round trip per partition): high watermark − committed offset for every partition the worker owns.
 * Partitions that left are dropped from the metric, so a scrape shows only what this worker owns.
 */
import type { PartitionLag } from '../../kafka/admin.js';
import type { Logger } from '../../ops/logger.js';
import type { WorkerMetrics } from '../../ops/worker-metrics.js';
import { partitionKey, type TopicPartition } from '../../pipeline/topic-partition.js';

export interface LagPollerOptions {
  /** The partitions owned now. */
  readonly owned: () => readonly TopicPartition[];
  /** Lag of `partitions` (the group consumer asking the broker). */
  readonly measure: (partitions: readonly TopicPartition[]) => Promise<PartitionLag[]>;
  readonly metrics: WorkerMetrics;
  readonly log: Logger;
  /** @default 5000 */
  readonly intervalMs?: number;
}

export class LagPoller {
  private timer: NodeJS.Timeout | undefined;
  private polling: Promise<void> | undefined;
  private readonly shown = new Map<string, TopicPartition>();
  private lastFailure: string | undefined;

  constructor(private readonly options: LagPollerOptions) {}

  start(): void {
    if (this.timer !== undefined) return;
    this.timer = setInterval(() => void this.poll(), this.options.intervalMs ?? 5_000);
    this.timer.unref();
  }

  /** Stops the timer and waits for an ask under way, so the consumer can be closed after. */
  async stop(): Promise<void> {
    clearInterval(this.timer);
    this.timer = undefined;
    await this.polling;
  }

  /** One measurement; skipped while the previous one is still waiting for the broker. */
  poll(): Promise<void> {
    this.polling ??= this.measure().finally(() => {
      this.polling = undefined;
    });
    return this.polling;
  }

  private async measure(): Promise<void> {
    const { metrics, log } = this.options;
    const owned = this.options.owned();
    let lags: PartitionLag[];
    try {
      lags = await this.options.measure(owned);
    } catch (error) {
      const text = (error as Error).message;
      if (text !== this.lastFailure) log.warn('measuring consumer lag failed; the lag metric keeps its last values', { error });
      this.lastFailure = text;
      return;
    }
    this.lastFailure = undefined;
    const current = new Set(this.options.owned().map(partitionKey));
    for (const [key, partition] of this.shown) {
      if (current.has(key)) continue;
      metrics.forgetPartition(partition.topic, partition.partition);
      this.shown.delete(key);
    }
    for (const lag of lags) {
      // Lag of a partition revoked while the broker answered would bring back a series just dropped.
      if (!current.has(partitionKey(lag))) continue;
      metrics.setConsumerLag(lag.topic, lag.partition, Number(lag.lag));
      this.shown.set(partitionKey(lag), { topic: lag.topic, partition: lag.partition });
    }
  }
}
