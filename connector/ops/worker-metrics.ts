/**
 * Every metric the streaming worker exports, defined once with its HELP text (the README's metrics table
 * is rendered from these definitions), and the calls that feed them from plain per-batch numbers.
 * Names follow Prometheus naming practice: `raretide_` prefix, base units (seconds, bytes) as suffix,
 * `_total` on counters, an `_info` gauge fixed at 1 for facts carried in labels.
 */
import type { Counter, Gauge, Histogram, MetricDefinition } from './metrics-registry.js';
import { MetricsRegistry } from './metrics-registry.js';

/** Why a planned synthetic record was not emitted. */
export type SkipReason = 'guard' | 'thinned' | 'invalid';

export const WORKER_METRICS = {
  recordsConsumed: {
    name: 'raretide_records_consumed_total',
    type: 'counter',
    help: 'Source records decoded and labelled, by class.',
    labels: ['class'],
  },
  originalsEmitted: {
    name: 'raretide_originals_emitted_total',
    type: 'counter',
    help: 'Source records passed through to the output topic, by class.',
    labels: ['class'],
  },
  syntheticEmitted: {
    name: 'raretide_synthetic_emitted_total',
    type: 'counter',
    help: 'Synthetic records written to the output topic, by class.',
    labels: ['class'],
  },
  syntheticSkipped: {
    name: 'raretide_synthetic_skipped_total',
    type: 'counter',
    help: 'Synthetic records the balance wanted but not emitted, by class and reason: guard (too close to a real record), thinned (rate cap), invalid (refused by the record or output schema).',
    labels: ['class', 'reason'],
  },
  deadLetters: {
    name: 'raretide_dead_letter_total',
    type: 'counter',
    help: 'Source records sent to the dead-letter topic, by reason code.',
    labels: ['reason'],
  },
  classShare: {
    name: 'raretide_class_share',
    type: 'gauge',
    help: 'Share of the combined output stream (originals + synthetic) per class, 0 to 1, over the owned partitions.',
    labels: ['class'],
  },
  classShareTarget: {
    name: 'raretide_class_share_target',
    type: 'gauge',
    help: 'Configured target share per oversampled class, 0 to 1.',
    labels: ['class'],
  },
  consumerLag: {
    name: 'raretide_consumer_lag_records',
    type: 'gauge',
    help: 'Records between the high watermark and the next offset to read, per owned source partition.',
    labels: ['topic', 'partition'],
  },
  modelLatency: {
    name: 'raretide_model_latency_seconds',
    type: 'histogram',
    help: 'Time of one model call (all rare records of a batch), in seconds.',
    labels: [],
    // Decades of 1-2.5-5 from 1 ms to 10 s (common practice for latency buckets).
    buckets: [0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10],
  },
  batchRecords: {
    name: 'raretide_batch_records',
    type: 'histogram',
    help: 'Source records per batch.',
    labels: [],
    // Up to 10,000 so raised `delivery.batchSize` values (default 500) still land in a finite bucket.
    buckets: [1, 10, 50, 100, 250, 500, 1000, 2500, 5000, 10000],
  },
  rateCapWait: {
    name: 'raretide_rate_cap_wait_seconds_total',
    type: 'counter',
    help: 'Time consumption was paused waiting for rate-cap tokens (policy wait), in seconds.',
    labels: [],
  },
  modelInfo: {
    name: 'raretide_model_info',
    type: 'gauge',
    help: 'The model in use (1 for the current one): its content id and the compute backend.',
    labels: ['model_id', 'backend'],
  },
  driftElbo: {
    name: 'raretide_drift_elbo',
    type: 'gauge',
    help: 'Median negative ELBO of the live records in the drift window (a keyed sample of the consumed records, the most recent kept), in nats; higher = less like the training data. Compare with raretide_drift_elbo_training. Absent for a model fitted without a drift reference.',
    labels: [],
  },
  driftElboTraining: {
    name: 'raretide_drift_elbo_training',
    type: 'gauge',
    help: 'Median negative ELBO of held-out training records, in nats (stored with the model at fit): the reference for raretide_drift_elbo.',
    labels: [],
  },
  driftElboTrainingP99: {
    name: 'raretide_drift_elbo_training_p99',
    type: 'gauge',
    help: '99th percentile of the negative ELBO of held-out training records, in nats: live records above it count as exceedances.',
    labels: [],
  },
  driftExceedanceRatio: {
    name: 'raretide_drift_exceedance_ratio',
    type: 'gauge',
    help: 'Share of the live records in the drift window whose negative ELBO exceeds raretide_drift_elbo_training_p99, 0 to 1; about 0.01 while the stream is like the training data. Sustained above 0.05 (5x the expected share; e.g. its 1-hour average), it suggests refitting the model on recent records (a rule of thumb, not a published value).',
    labels: [],
  },
  driftWindowRecords: {
    name: 'raretide_drift_window_records',
    type: 'gauge',
    help: 'Scored live records in the drift window; the exceedance ratio is coarse until the window is full.',
    labels: [],
  },
  residentMemory: {
    name: 'raretide_process_resident_memory_bytes',
    type: 'gauge',
    help: 'Resident set size of the worker process, in bytes.',
    labels: [],
  },
  eventLoopLagP99: {
    name: 'raretide_event_loop_lag_p99_seconds',
    type: 'gauge',
    help: '99th percentile of event-loop delay since the previous sample, in seconds.',
    labels: [],
  },
  eventLoopLagMax: {
    name: 'raretide_event_loop_lag_max_seconds',
    type: 'gauge',
    help: 'Largest event-loop delay since the previous sample, in seconds.',
    labels: [],
  },
} as const satisfies Record<string, MetricDefinition>;

/** One class's figures for one batch: plain counts, as the pipeline's per-class tally holds them. */
export interface ClassFigures {
  readonly consumed: number;
  readonly synthetic: number;
  readonly originalsEmitted: number;
  /** Refused by the rate cap (policy `thin`). */
  readonly thinned: number;
  /** Dropped after sampling, by the privacy guard or the schema check; includes `invalid`. */
  readonly guardDropped: number;
  /** Of `guardDropped`, those the record or output schema refused, when the caller can tell them apart. */
  readonly invalid?: number;
}

export interface BatchFigures {
  /** Source messages in the batch, dead letters included. */
  readonly records: number;
  readonly byClass: Readonly<Record<string, ClassFigures>>;
  /** Dead letters by reason code. */
  readonly deadLetters: Readonly<Partial<Record<string, number>>>;
  /** Rows sent to the model; 0 when the model was not called. */
  readonly modelRows: number;
  /** Duration of the model call in milliseconds. */
  readonly modelMs: number;
}

/** The drift window read against the model's reference: negative ELBO in nats. */
export interface DriftWindowFigures {
  readonly reference: { readonly p50: number; readonly p99: number };
  readonly windowRecords: number;
  readonly exceedanceRatio: number;
  readonly medianNegativeElbo: number;
}

/** A class's current share of the output and its target (undefined for classes not oversampled). */
export interface ClassShareFigure {
  readonly label: string;
  readonly share: number;
  readonly target?: number | undefined;
}

/** The worker's metrics on their own registry, fed from plain numbers. */
export class WorkerMetrics {
  readonly registry: MetricsRegistry;
  readonly recordsConsumed: Counter<'class'>;
  readonly originalsEmitted: Counter<'class'>;
  readonly syntheticEmitted: Counter<'class'>;
  readonly syntheticSkipped: Counter<'class' | 'reason'>;
  readonly deadLetters: Counter<'reason'>;
  readonly classShare: Gauge<'class'>;
  readonly classShareTarget: Gauge<'class'>;
  readonly consumerLag: Gauge<'topic' | 'partition'>;
  readonly modelLatency: Histogram<never>;
  readonly batchRecords: Histogram<never>;
  readonly rateCapWait: Counter<never>;
  readonly modelInfo: Gauge<'model_id' | 'backend'>;
  readonly driftElbo: Gauge<never>;
  readonly driftElboTraining: Gauge<never>;
  readonly driftElboTrainingP99: Gauge<never>;
  readonly driftExceedanceRatio: Gauge<never>;
  readonly driftWindowRecords: Gauge<never>;
  readonly residentMemory: Gauge<never>;
  readonly eventLoopLagP99: Gauge<never>;
  readonly eventLoopLagMax: Gauge<never>;

  constructor(registry = new MetricsRegistry()) {
    this.registry = registry;
    const m = WORKER_METRICS;
    this.recordsConsumed = registry.counter(m.recordsConsumed);
    this.originalsEmitted = registry.counter(m.originalsEmitted);
    this.syntheticEmitted = registry.counter(m.syntheticEmitted);
    this.syntheticSkipped = registry.counter(m.syntheticSkipped);
    this.deadLetters = registry.counter(m.deadLetters);
    this.classShare = registry.gauge(m.classShare);
    this.classShareTarget = registry.gauge(m.classShareTarget);
    this.consumerLag = registry.gauge(m.consumerLag);
    this.modelLatency = registry.histogram(m.modelLatency);
    this.batchRecords = registry.histogram(m.batchRecords);
    this.rateCapWait = registry.counter(m.rateCapWait);
    this.modelInfo = registry.gauge(m.modelInfo);
    this.driftElbo = registry.gauge(m.driftElbo);
    this.driftElboTraining = registry.gauge(m.driftElboTraining);
    this.driftElboTrainingP99 = registry.gauge(m.driftElboTrainingP99);
    this.driftExceedanceRatio = registry.gauge(m.driftExceedanceRatio);
    this.driftWindowRecords = registry.gauge(m.driftWindowRecords);
    this.residentMemory = registry.gauge(m.residentMemory);
    this.eventLoopLagP99 = registry.gauge(m.eventLoopLagP99);
    this.eventLoopLagMax = registry.gauge(m.eventLoopLagMax);
  }

  /** Shows every known class at 0 from the start, so a class's first record is a visible increase. */
  initializeClasses(classes: readonly string[]): void {
    for (const label of classes) {
      this.recordsConsumed.initialize({ class: label });
      this.syntheticEmitted.initialize({ class: label });
    }
  }

  recordBatch(batch: BatchFigures): void {
    this.batchRecords.observe({}, batch.records);
    if (batch.modelRows > 0) this.modelLatency.observe({}, batch.modelMs / 1000);
    for (const [label, tally] of Object.entries(batch.byClass)) {
      const labels = { class: label };
      this.recordsConsumed.inc(labels, tally.consumed);
      this.syntheticEmitted.inc(labels, tally.synthetic);
      if (tally.originalsEmitted > 0) this.originalsEmitted.inc(labels, tally.originalsEmitted);
      const invalid = tally.invalid ?? 0;
      this.skip(label, 'thinned', tally.thinned);
      this.skip(label, 'guard', tally.guardDropped - invalid);
      this.skip(label, 'invalid', invalid);
    }
    for (const [reason, count] of Object.entries(batch.deadLetters)) {
      if (count !== undefined && count > 0) this.deadLetters.inc({ reason }, count);
    }
  }

  setClassShares(shares: readonly ClassShareFigure[]): void {
    for (const { label, share, target } of shares) {
      this.classShare.set({ class: label }, share);
      if (target !== undefined) this.classShareTarget.set({ class: label }, target);
    }
  }

  setConsumerLag(topic: string, partition: number, lagRecords: number): void {
    this.consumerLag.set({ topic, partition: String(partition) }, lagRecords);
  }

  /** Drops the lag series of a partition this worker no longer owns (revoked in a rebalance). */
  forgetPartition(topic: string, partition: number): void {
    this.consumerLag.remove({ topic, partition: String(partition) });
  }

  addRateCapWait(seconds: number): void {
    this.rateCapWait.inc({}, seconds);
  }

  /** Names the model now in use; a hot-reloaded model replaces the previous series. */
  setModel(modelId: string, backend: string): void {
    this.modelInfo.clear();
    this.modelInfo.set({ model_id: modelId, backend }, 1);
  }

  setDrift(liveMedianNegativeElbo: number, trainingMedianNegativeElbo: number): void {
    this.driftElbo.set({}, liveMedianNegativeElbo);
    this.driftElboTraining.set({}, trainingMedianNegativeElbo);
  }

  /** The drift window's figures against the model's reference (connector/pipeline/drift-monitor.ts). */
  setDriftWindow(figures: DriftWindowFigures): void {
    this.setDrift(figures.medianNegativeElbo, figures.reference.p50);
    this.driftElboTrainingP99.set({}, figures.reference.p99);
    this.driftExceedanceRatio.set({}, figures.exceedanceRatio);
    this.driftWindowRecords.set({}, figures.windowRecords);
  }

  /** Drops the drift series: the model in use has no drift reference, or its window is empty again. */
  clearDrift(): void {
    for (const gauge of [this.driftElbo, this.driftElboTraining, this.driftElboTrainingP99, this.driftExceedanceRatio, this.driftWindowRecords]) gauge.clear();
  }

  setRuntime(sample: { readonly residentBytes: number; readonly loopLagP99Seconds: number; readonly loopLagMaxSeconds: number }): void {
    this.residentMemory.set({}, sample.residentBytes);
    this.eventLoopLagP99.set({}, sample.loopLagP99Seconds);
    this.eventLoopLagMax.set({}, sample.loopLagMaxSeconds);
  }

  private skip(label: string, reason: SkipReason, count: number): void {
    if (count > 0) this.syntheticSkipped.inc({ class: label, reason }, count);
  }
}

/** The README's metrics list: a markdown table made from the definitions, so it cannot drift. */
export function renderMetricsTable(): string {
  const rows = Object.values(WORKER_METRICS).map((definition: MetricDefinition) => {
    const labels = definition.labels.length === 0 ? '' : definition.labels.map((label) => `\`${label}\``).join(', ');
    return `| \`${definition.name}\` | ${definition.type} | ${labels} | ${definition.help.replace(/\|/g, '\\|')} |`;
  });
  return ['| metric | type | labels | meaning |', '|---|---|---|---|', ...rows].join('\n') + '\n';
}
