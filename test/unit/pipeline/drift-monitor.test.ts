import { describe, expect, it } from 'vitest';
import type { DriftScorer } from '../../../model/drift/live-scorer.js';
import type { AvroRecord } from '../../../model/features/avro-types.js';
import type { DecodedEntry } from '../../../connector/pipeline/decode-stage.js';
import { DriftMonitor, isDriftSample } from '../../../connector/pipeline/drift-monitor.js';
import { DriftWindow } from '../../../connector/pipeline/drift-window.js';
import { messagesOf, sorterEvents, sorterPipeline } from './support/sorter-events.js';

/** A scorer whose score is the record's `weightKg`, so tests choose every score; counts its calls. */
class WeightScorer implements DriftScorer {
  readonly width = 1;
  calls: number[] = [];
  constructor(
    readonly modelId: string,
    readonly reference = { rows: 'held-out' as const, count: 500, p50: 3, p90: 8, p99: 10 },
  ) {}
  classIndex(label: string): number {
    return ['ok', 'jam'].indexOf(label);
  }
  encode(record: AvroRecord, out: Float32Array, row: number): void {
    out[row] = record['weightKg'] as number;
  }
  score(features: Float32Array, classIndices: Int32Array): Float64Array {
    this.calls.push(classIndices.length);
    return Float64Array.from(features);
  }
}

function entries(weights: readonly number[], label = 'ok', firstOffset = 0): DecodedEntry[] {
  return weights.map((weightKg, i) => ({
    kind: 'record',
    message: { topic: 'sorter.events', partition: 0, offset: BigInt(firstOffset + i), value: Buffer.alloc(0), key: null, headers: [], timestamp: undefined },
    record: { weightKg },
    label,
  }));
}

describe('isDriftSample', () => {
  it('picks about 1 in n records, the same ones every time, independently per partition', () => {
    const n = 16;
    const total = 160_000;
    let picked = 0;
    let both = 0;
    for (let offset = 0; offset < total; offset++) {
      const first = isDriftSample(0, BigInt(offset), n);
      if (first) picked += 1;
      if (first && isDriftSample(1, BigInt(offset), n)) both += 1;
      if (offset % 997 === 0) expect(isDriftSample(0, BigInt(offset), n)).toBe(first);
    }
    // Binomial(160,000, 1/16): mean 10,000, sd ≈ 97 [calc]; allow 5 sd. Two partitions coincide on
    // about total/n² = 625 offsets (sd ≈ 25) when the choices are independent.
    expect(Math.abs(picked - total / n)).toBeLessThan(5 * 97);
    expect(Math.abs(both - total / (n * n))).toBeLessThan(5 * 25);
    // Offsets beyond 2^32 (a long-lived partition) are sampled too.
    const high = Array.from({ length: 1600 }, (_, i) => isDriftSample(0, 2n ** 33n + BigInt(i), n)).filter(Boolean).length;
    expect(high).toBeGreaterThan(50);
    expect(high).toBeLessThan(160);
  });

  it('takes every record when n is 1', () => {
    expect(isDriftSample(3, 12345n, 1)).toBe(true);
  });
});

describe('DriftWindow', () => {
  it('keeps the most recent scores: share above the threshold and median', () => {
    const window = new DriftWindow(4, 10);
    expect(window.exceedanceRatio()).toBeNaN();
    window.add([1, 11, 3]);
    expect(window.size).toBe(3);
    expect(window.exceedanceRatio()).toBeCloseTo(1 / 3, 12);
    expect(window.median()).toBe(3);
    window.add([12, 2, 4]); // evicts 1 and 11: holds 3, 12, 2, 4
    expect(window.size).toBe(4);
    expect(window.exceedanceRatio()).toBe(0.25);
    expect(window.median()).toBe(3.5);
    window.add([10]); // exactly the threshold is not above it; evicts 3
    expect(window.exceedanceRatio()).toBe(0.25);
  });

  it('refuses a capacity that is not a whole number ≥ 1', () => {
    expect(() => new DriftWindow(0, 1)).toThrow(/capacity .* got 0/);
  });
});

describe('DriftMonitor', () => {
  it('scores a sample in calls of scoreRows and reads the window against the reference p99', () => {
    const monitor = new DriftMonitor({ sampleOneIn: 1, scoreRows: 4, windowRecords: 8 });
    const scorer = new WeightScorer('m1');
    monitor.follow(scorer);
    expect(monitor.observe(entries([1, 2, 3]))).toBe(false);
    expect(monitor.figures()).toBeUndefined();
    expect(monitor.observe(entries([20, 5, 6, 7, 30, 2], 'ok', 3))).toBe(true);
    expect(scorer.calls).toEqual([4, 4]);
    // Window: 1, 2, 3, 20, 5, 6, 7, 30 (p99 10: two above); one row still buffered.
    expect(monitor.figures()).toEqual({ modelId: 'm1', reference: scorer.reference, windowRecords: 8, exceedanceRatio: 0.25, medianNegativeElbo: 5.5 });
  });

  it('skips dead letters and classes the model does not know', () => {
    const monitor = new DriftMonitor({ sampleOneIn: 1, scoreRows: 2, windowRecords: 8 });
    const scorer = new WeightScorer('m1');
    monitor.follow(scorer);
    const rejected: DecodedEntry = { kind: 'rejected', message: entries([0])[0]!.message, problem: { code: 'missing-label', reason: 'no label', retriable: false } };
    monitor.observe([rejected, ...entries([50], 'retired'), ...entries([1, 2], 'jam')]);
    expect(scorer.calls).toEqual([2]);
    expect(monitor.figures()?.windowRecords).toBe(2);
  });

  it('starts over when it follows another model, and stops without a reference', () => {
    const monitor = new DriftMonitor({ sampleOneIn: 1, scoreRows: 2, windowRecords: 8 });
    monitor.follow(new WeightScorer('m1'));
    monitor.observe(entries([20, 20, 20]));
    expect(monitor.figures()?.exceedanceRatio).toBe(1);
    const next = new WeightScorer('m2');
    monitor.follow(next);
    expect(monitor.figures()).toBeUndefined();
    monitor.observe(entries([1, 2]));
    expect(monitor.figures()).toMatchObject({ modelId: 'm2', windowRecords: 2, exceedanceRatio: 0 });
    monitor.follow(undefined);
    expect(monitor.observe(entries([1, 2]))).toBe(false);
    expect(monitor.figures()).toBeUndefined();
  });

  it('is fed by the pipeline core with every decoded, labelled batch', async () => {
    const monitor = new DriftMonitor({ sampleOneIn: 1, scoreRows: 1, windowRecords: 100 });
    const scorer = new WeightScorer('m1');
    monitor.follow(scorer);
    const { core } = sorterPipeline({
      targets: { jam: 0.2 },
      seed: 7,
      temperature: 0.8,
      includeOriginals: false,
      assign: { topic: 'sorter.events', partition: 0 },
      onDecoded: (decoded) => monitor.observe(decoded),
    });
    const events = sorterEvents(30, { jam: 0.2 }, 5);
    await core.processBatch(messagesOf(events));
    const known = events.filter((event) => event.outcome === 'ok' || event.outcome === 'jam');
    expect(monitor.figures()?.windowRecords).toBe(known.length);
  });
});
