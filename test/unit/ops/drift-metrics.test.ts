import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { followModelForDrift, observeForDrift, publishDrift } from '../../../connector/cli/run/drift-hook.js';
import { createLogger } from '../../../connector/ops/logger.js';
import { WorkerMetrics } from '../../../connector/ops/worker-metrics.js';
import type { DecodedEntry } from '../../../connector/pipeline/decode-stage.js';
import { DriftMonitor } from '../../../connector/pipeline/drift-monitor.js';
import { DRIFT_REFERENCE_ATTACHMENT } from '../../../model/drift/reference.js';
import { fitModel, type FitResult } from '../../../model/fit.js';
import { createPrng } from '../../../model/random.js';
import { loadTrainedModel, type TrainedModel } from '../../../model/trained-model.js';
import { saveModel } from '../../../model/vae/index.js';

/**
 * One sample line per the EBNF of Prometheus' "Text format details" (exposition_formats.md): name,
 * optional label set, a float (incl. +Inf/-Inf/NaN).
 */
const SAMPLE_LINE = /^[a-zA-Z_:][a-zA-Z0-9_:]*(\{[a-zA-Z_][a-zA-Z0-9_]*="(?:[^"\\\n]|\\[\\"n])*"(,[a-zA-Z_][a-zA-Z0-9_]*="(?:[^"\\\n]|\\[\\"n])*")*\})? (?:[-+]?(?:\d+\.?\d*(?:e[-+]?\d+)?|Inf)|NaN)$/;

const DRIFT_GAUGES = [
  'raretide_drift_elbo',
  'raretide_drift_elbo_training',
  'raretide_drift_elbo_training_p99',
  'raretide_drift_exceedance_ratio',
  'raretide_drift_window_records',
] as const;

function sampleValue(text: string, series: string): number | undefined {
  const line = text.split('\n').find((candidate) => candidate.startsWith(`${series} `));
  return line === undefined ? undefined : Number(line.slice(series.length + 1));
}

function driftSamples(text: string): string[] {
  return text.split('\n').filter((line) => line.startsWith('raretide_drift_'));
}

describe('drift metrics', () => {
  it('render in the Prometheus text format, each with HELP and TYPE', () => {
    const metrics = new WorkerMetrics();
    metrics.setDriftWindow({ reference: { p50: 3.52, p99: 8.19 }, windowRecords: 1000, exceedanceRatio: 0.013, medianNegativeElbo: 3.61 });
    const text = metrics.registry.render();
    for (const name of DRIFT_GAUGES) {
      expect(text).toContain(`# TYPE ${name} gauge\n`);
      expect(text).toMatch(new RegExp(`^# HELP ${name} \\S.*$`, 'm'));
    }
    for (const line of driftSamples(text)) expect(line).toMatch(SAMPLE_LINE);
    expect(sampleValue(text, 'raretide_drift_elbo')).toBe(3.61);
    expect(sampleValue(text, 'raretide_drift_elbo_training')).toBe(3.52);
    expect(sampleValue(text, 'raretide_drift_elbo_training_p99')).toBe(8.19);
    expect(sampleValue(text, 'raretide_drift_exceedance_ratio')).toBe(0.013);
    expect(sampleValue(text, 'raretide_drift_window_records')).toBe(1000);
    expect(text).toMatch(/# HELP raretide_drift_exceedance_ratio .*0\.05.*rule of thumb/);
  });

  it('are absent until set, and after clearDrift', () => {
    const metrics = new WorkerMetrics();
    expect(driftSamples(metrics.registry.render())).toEqual([]);
    metrics.setDriftWindow({ reference: { p50: 1, p99: 2 }, windowRecords: 10, exceedanceRatio: 0, medianNegativeElbo: 1 });
    metrics.clearDrift();
    expect(driftSamples(metrics.registry.render())).toEqual([]);
  });
});

// Invented scenario: cold-store freezers report temperature and door openings; "defrost_fault" is rare.
const freezerSchema = {
  type: 'record',
  name: 'FreezerReading',
  namespace: 'test.raretide.coldstore',
  fields: [
    { name: 'temperature', type: 'double' },
    { name: 'door_openings', type: 'double' },
    { name: 'status', type: 'string' },
  ],
};

function freezerReadings(count: number, warmer = 0): { temperature: number; door_openings: number; status: string }[] {
  const prng = createPrng(31);
  return Array.from({ length: count }, (_, i) => {
    const fault = i % 10 === 4;
    return { temperature: (fault ? -12 : -20) + warmer + 1.5 * prng.normal(), door_openings: 6 + 2 * prng.normal(), status: fault ? 'defrost_fault' : 'ok' };
  });
}

function entriesOf(records: readonly { status: string }[]): DecodedEntry[] {
  return records.map((record, i) => ({
    kind: 'record',
    message: { topic: 'coldstore.readings', partition: 0, offset: BigInt(i), value: Buffer.alloc(0), key: null, headers: [], timestamp: undefined },
    record,
    label: record.status,
  }));
}

describe('the worker with drift monitoring', () => {
  let workspace = '';
  let fitted: FitResult;
  let current: TrainedModel;
  let older: TrainedModel;

  beforeAll(async () => {
    workspace = await mkdtemp(join(tmpdir(), 'raretide-drift-hook-'));
    fitted = await fitModel({ schema: freezerSchema, records: freezerReadings(1500), labelPath: 'status', training: { hidden: [16], latent: 2, epochs: 6, batchSize: 64, seed: 2 } });
    await saveModel(join(workspace, 'current'), fitted.bundle);
    const { [DRIFT_REFERENCE_ATTACHMENT]: _dropped, ...olderAttachments } = fitted.bundle.attachments;
    await saveModel(join(workspace, 'older'), { ...fitted.bundle, attachments: olderAttachments });
    current = await loadTrainedModel(join(workspace, 'current'));
    older = await loadTrainedModel(join(workspace, 'older'));
  }, 120_000);

  afterAll(async () => {
    current?.dispose();
    older?.dispose();
    fitted?.dispose();
    await rm(workspace, { recursive: true, force: true });
  });

  function worker(): { lines: string[]; metrics: WorkerMetrics; monitor: DriftMonitor; log: ReturnType<typeof createLogger> } {
    const lines: string[] = [];
    return { lines, metrics: new WorkerMetrics(), monitor: new DriftMonitor({ scoreRows: 32 }), log: createLogger({ format: 'text', sink: (line) => lines.push(line) }) };
  }

  it('runs a model fitted before drift references without drift metrics, saying so in one log line', () => {
    const { lines, metrics, monitor, log } = worker();
    followModelForDrift(monitor, older, metrics, log);
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(/no drift reference .*refit it with `raretide fit` to enable them/);
    expect(monitor.observe(entriesOf(freezerReadings(2000)))).toBe(false);
    publishDrift(monitor, metrics);
    expect(driftSamples(metrics.registry.render())).toEqual([]);
  });

  it('publishes the drift gauges for a model with a reference, and follows a hot reload to an older model', () => {
    const { lines, metrics, monitor, log } = worker();
    followModelForDrift(monitor, current, metrics, log);
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(/drift: scoring 1 in 32 records under model \w+ \(reference negative ELBO p50 [\d.-]+, p99 [\d.-]+ nats over 150 held-out rows\)/);
    // 8,000 records like the training data, then 8,000 from freezers running 8 °C warmer.
    monitor.observe(entriesOf(freezerReadings(8000)));
    publishDrift(monitor, metrics);
    const steady = sampleValue(metrics.registry.render(), 'raretide_drift_exceedance_ratio')!;
    // Following the model again starts an empty window, as a hot reload does.
    followModelForDrift(monitor, current, metrics, log);
    monitor.observe(entriesOf(freezerReadings(8000, 8)));
    publishDrift(monitor, metrics);
    const text = metrics.registry.render();
    const warm = sampleValue(text, 'raretide_drift_exceedance_ratio')!;
    // The documented rule of thumb: a sustained ratio above 0.05 suggests refitting. Warm 'ok' freezers
    // sit where defrost faults did, inside the observed range, so the shift reads moderate (about 0.2).
    expect(steady).toBeLessThan(0.05);
    expect(warm).toBeGreaterThan(0.1);
    expect(sampleValue(text, 'raretide_drift_elbo')).toBeGreaterThan(sampleValue(text, 'raretide_drift_elbo_training')!);
    followModelForDrift(monitor, older, metrics, log);
    expect(driftSamples(metrics.registry.render())).toEqual([]);
    expect(lines.at(-1)).toMatch(/no drift reference/);
  });

  it('turns drift monitoring off with one warning, without failing the batch, when scoring throws', () => {
    const { lines, metrics, monitor, log } = worker();
    followModelForDrift(monitor, current, metrics, log);
    monitor.observe(entriesOf(freezerReadings(2000)));
    publishDrift(monitor, metrics);
    expect(driftSamples(metrics.registry.render())).not.toEqual([]);
    const reference = monitor.figures()!.reference;
    monitor.follow({
      modelId: current.id,
      reference,
      width: 1,
      classIndex: () => 0,
      encode: () => {
        throw new Error('tensor backend lost');
      },
      score: () => new Float64Array(0),
    });
    expect(() => observeForDrift(monitor, entriesOf(freezerReadings(100)), metrics, log)).not.toThrow();
    expect(lines.at(-1)).toMatch(/drift metrics are off until the next model is loaded/);
    expect(monitor.figures()).toBeUndefined();
    expect(driftSamples(metrics.registry.render())).toEqual([]);
  });
});
