import { describe, expect, it } from 'vitest';
import { renderMetricsTable, WORKER_METRICS, WorkerMetrics, type BatchFigures } from '../../../connector/ops/worker-metrics.js';

const BATCH: BatchFigures = {
  records: 500,
  byClass: {
    normal: { consumed: 480, synthetic: 0, originalsEmitted: 480, thinned: 0, guardDropped: 0 },
    leak: { consumed: 12, synthetic: 50, originalsEmitted: 12, thinned: 6, guardDropped: 4, invalid: 1 },
  },
  deadLetters: { malformed: 5, 'missing-label': 3, truncated: 0 },
  modelRows: 12,
  modelMs: 37.5,
};

/**
 * One sample line per the EBNF of Prometheus' "Text format details": name, optional label set with
 * quoted, escaped values, a float (incl. +Inf/-Inf/NaN).
 */
const SAMPLE_LINE = /^[a-zA-Z_:][a-zA-Z0-9_:]*(\{[a-zA-Z_][a-zA-Z0-9_]*="(?:[^"\\\n]|\\[\\"n])*"(,[a-zA-Z_][a-zA-Z0-9_]*="(?:[^"\\\n]|\\[\\"n])*")*\})? (?:[-+]?(?:\d+\.?\d*(?:e[-+]?\d+)?|Inf)|NaN)$/;

function sampleValue(text: string, series: string): number | undefined {
  const line = text.split('\n').find((candidate) => candidate.startsWith(`${series} `));
  return line === undefined ? undefined : Number(line.slice(series.length + 1));
}

describe('WorkerMetrics', () => {
  it('turns a batch of plain counts into the per-class counters, skip reasons, dead letters and histograms', () => {
    const metrics = new WorkerMetrics();
    metrics.recordBatch(BATCH);
    metrics.recordBatch({ ...BATCH, modelRows: 0, modelMs: 0 });
    const text = metrics.registry.render();
    expect(sampleValue(text, 'raretide_records_consumed_total{class="leak"}')).toBe(24);
    expect(sampleValue(text, 'raretide_synthetic_emitted_total{class="leak"}')).toBe(100);
    expect(sampleValue(text, 'raretide_originals_emitted_total{class="normal"}')).toBe(960);
    expect(sampleValue(text, 'raretide_synthetic_skipped_total{class="leak",reason="thinned"}')).toBe(12);
    expect(sampleValue(text, 'raretide_synthetic_skipped_total{class="leak",reason="guard"}')).toBe(6);
    expect(sampleValue(text, 'raretide_synthetic_skipped_total{class="leak",reason="invalid"}')).toBe(2);
    expect(text).not.toContain('raretide_synthetic_skipped_total{class="normal"');
    expect(sampleValue(text, 'raretide_dead_letter_total{reason="missing-label"}')).toBe(6);
    expect(text).not.toContain('reason="truncated"');
    // The model ran in one batch of two: one latency observation, two batch-size observations.
    expect(sampleValue(text, 'raretide_model_latency_seconds_count')).toBe(1);
    expect(sampleValue(text, 'raretide_model_latency_seconds_sum')).toBe(0.0375);
    expect(sampleValue(text, 'raretide_model_latency_seconds_bucket{le="0.025"}')).toBe(0);
    expect(sampleValue(text, 'raretide_model_latency_seconds_bucket{le="0.05"}')).toBe(1);
    expect(sampleValue(text, 'raretide_batch_records_bucket{le="500"}')).toBe(2);
    expect(sampleValue(text, 'raretide_batch_records_count')).toBe(2);
  });

  it('sets shares, lag, model info (replaced on reload), drift, rate-cap wait and runtime gauges', () => {
    const metrics = new WorkerMetrics();
    metrics.setClassShares([
      { label: 'leak', share: 0.041, target: 0.05 },
      { label: 'normal', share: 0.959, target: undefined },
    ]);
    metrics.setConsumerLag('pumps', 0, 120);
    metrics.setConsumerLag('pumps', 1, 7);
    metrics.forgetPartition('pumps', 0);
    metrics.setModel('m-old', 'wasm');
    metrics.setModel('m-new', 'wasm');
    metrics.setDrift(41.5, 39.25);
    metrics.addRateCapWait(0.25);
    metrics.addRateCapWait(1.5);
    metrics.setRuntime({ residentBytes: 268_435_456, loopLagP99Seconds: 0.004, loopLagMaxSeconds: 0.02 });
    const text = metrics.registry.render();
    expect(sampleValue(text, 'raretide_class_share{class="leak"}')).toBe(0.041);
    expect(sampleValue(text, 'raretide_class_share_target{class="leak"}')).toBe(0.05);
    expect(text).not.toContain('raretide_class_share_target{class="normal"}');
    expect(text).not.toContain('partition="0"');
    expect(sampleValue(text, 'raretide_consumer_lag_records{topic="pumps",partition="1"}')).toBe(7);
    expect(text).not.toContain('m-old');
    expect(sampleValue(text, 'raretide_model_info{model_id="m-new",backend="wasm"}')).toBe(1);
    expect(sampleValue(text, 'raretide_drift_elbo')).toBe(41.5);
    expect(sampleValue(text, 'raretide_drift_elbo_training')).toBe(39.25);
    expect(sampleValue(text, 'raretide_rate_cap_wait_seconds_total')).toBe(1.75);
    expect(sampleValue(text, 'raretide_process_resident_memory_bytes')).toBe(268_435_456);
    expect(sampleValue(text, 'raretide_event_loop_lag_max_seconds')).toBe(0.02);
  });

  it('shows known classes at 0 before their first record', () => {
    const metrics = new WorkerMetrics();
    metrics.initializeClasses(['leak', 'normal']);
    expect(sampleValue(metrics.registry.render(), 'raretide_synthetic_emitted_total{class="leak"}')).toBe(0);
  });

  it('renders a well-formed exposition: every sample line parses, HELP and TYPE precede samples, +Inf equals _count', () => {
    const metrics = new WorkerMetrics();
    metrics.recordBatch(BATCH);
    metrics.setClassShares([{ label: 'odd "class"\\\n', share: 0.5, target: 0.5 }]);
    metrics.setModel('abc', 'wasm');
    const text = metrics.registry.render();
    expect(text.endsWith('\n')).toBe(true);
    const typed = new Set<string>();
    for (const line of text.slice(0, -1).split('\n')) {
      const typeLine = /^# TYPE (\S+) (counter|gauge|histogram)$/.exec(line);
      if (typeLine !== null) typed.add(typeLine[1]!);
      if (line.startsWith('#')) continue;
      expect(line).toMatch(SAMPLE_LINE);
      const family = line.split(/[{ ]/)[0]!.replace(/_(bucket|sum|count)$/, '');
      expect(typed.has(family) || typed.has(line.split(/[{ ]/)[0]!)).toBe(true);
    }
    for (const name of ['raretide_model_latency_seconds', 'raretide_batch_records']) {
      expect(sampleValue(text, `${name}_bucket{le="+Inf"}`)).toBe(sampleValue(text, `${name}_count`));
    }
  });

  it('follows the naming practice: raretide_ prefix, _total exactly on counters, base-unit suffixes', () => {
    for (const definition of Object.values(WORKER_METRICS)) {
      expect(definition.name).toMatch(/^raretide_[a-z0-9_]+$/);
      expect(definition.name.endsWith('_total')).toBe(definition.type === 'counter');
      expect(definition.name).not.toMatch(/_(milliseconds|ms|kilobytes|megabytes|percent)(_|$)/);
      expect(definition.help.length).toBeGreaterThan(10);
    }
  });

  it('renders the README metrics table from the definitions', () => {
    const table = renderMetricsTable();
    const lines = table.trimEnd().split('\n');
    expect(lines[0]).toBe('| metric | type | labels | meaning |');
    expect(lines).toHaveLength(Object.keys(WORKER_METRICS).length + 2);
    expect(table).toContain('| `raretide_synthetic_skipped_total` | counter | `class`, `reason` |');
    expect(table).toContain('| `raretide_model_latency_seconds` | histogram |  |');
  });
});
