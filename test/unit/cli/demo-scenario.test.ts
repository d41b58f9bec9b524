/**
 * The demo's invented pump-station scenario: deterministic, valid for its schema, with fault shares
 * near the set rates and faults a feature can tell apart (imperfectly) — and the shipped copies of its
 * config and schema in config/examples/ equal to what the demo writes.
 */
import { readFile } from 'node:fs/promises';

import { describe, expect, it } from 'vitest';

import { loadConfigFile } from '../../../config/load.js';
import { DEFAULT_DEMO_EPOCHS } from '../../../connector/cli/commands/demo.js';
import { demoTopics, DEMO_TARGETS, renderDemoConfig } from '../../../connector/cli/demo/demo-config.js';
import { PUMP_CONDITIONS, PUMP_STATION_SCHEMA, type PumpStationReading } from '../../../connector/cli/demo/pump-station-schema.js';
import { DEFAULT_FAULT_RATES, PumpStationTelemetry } from '../../../connector/cli/demo/pump-station-telemetry.js';
import { pumpStationSchema } from '../../../connector/cli/demo/scenario-files.js';

const COUNT = 20_000;
const readings = new PumpStationTelemetry({ seed: 1 }).take(COUNT);

/**
 * ROC-AUC of `score` separating the `positive` readings from the `normal` ones, as the Mann–Whitney
 * probability that a positive outscores a normal reading, ties counting one half (Hanley & McNeil 1982).
 */
function separation(positive: string, score: (reading: PumpStationReading) => number): number {
  const positives = readings.filter((reading) => reading.condition === positive).map(score);
  const negatives = readings.filter((reading) => reading.condition === 'normal').map(score).sort((a, b) => a - b);
  let wins = 0;
  for (const value of positives) {
    let below = 0;
    let equal = 0;
    for (const other of negatives) {
      if (other < value) below += 1;
      else if (other === value) equal += 1;
      else break;
    }
    wins += below + equal / 2;
  }
  return wins / (positives.length * negatives.length);
}

describe('the invented pump-station telemetry', () => {
  it('is deterministic: the same seed gives the same readings, another seed others', () => {
    expect(new PumpStationTelemetry({ seed: 1 }).take(500)).toEqual(readings.slice(0, 500));
    expect(new PumpStationTelemetry({ seed: 2 }).take(500)).not.toEqual(readings.slice(0, 500));
  });

  it('writes readings valid for its Avro schema, which round-trip exactly', () => {
    for (const reading of readings.slice(0, 2_000)) {
      expect(pumpStationSchema.type.isValid(reading)).toBe(true);
      expect(pumpStationSchema.type.fromBuffer(pumpStationSchema.type.toBuffer(reading))).toEqual(reading);
    }
    expect(new Set(readings.map((reading) => reading.condition))).toEqual(new Set(PUMP_CONDITIONS));
    // Every field type the brief names occurs: nulls and values in the nullable field, both booleans, every mode.
    expect(readings.some((reading) => reading.upstreamFlowLps === null) && readings.some((reading) => reading.upstreamFlowLps !== null)).toBe(true);
    expect(new Set(readings.map((reading) => reading.leakSensorWet))).toEqual(new Set([true, false]));
    expect(new Set(readings.map((reading) => reading.pumpMode))).toEqual(new Set(['AUTO', 'REMOTE', 'MANUAL']));
  });

  it('is marked invented in its schema and numbers its readings in order', () => {
    expect(PUMP_STATION_SCHEMA.doc).toMatch(/^INVENTED/);
    expect(readings.slice(0, 3).map((reading) => reading.readingId)).toEqual([1, 2, 3]);
    expect(readings[1]!.observedAt - readings[0]!.observedAt).toBe(2_500);
  });

  it('makes each fault at its set rate, within 4 binomial standard errors', () => {
    for (const [fault, rate] of Object.entries(DEFAULT_FAULT_RATES)) {
      const share = readings.filter((reading) => reading.condition === fault).length / COUNT;
      // Standard error of a binomial share: sqrt(p(1 − p)/n) (any statistics handbook).
      expect(Math.abs(share - rate)).toBeLessThan(4 * Math.sqrt((rate * (1 - rate)) / COUNT));
    }
  });

  it('leaves signs of each fault a classifier can learn, but not perfectly', () => {
    const cavitation = separation('cavitation', (reading) => -reading.suctionPressureKpa);
    const dryRun = separation('dry-run', (reading) => reading.startsLastHour);
    const sealLeak = separation('seal-leak', (reading) => reading.motorTempC);
    // Measured with seed 1: 0.84, 0.88 and 0.77.
    expect(cavitation).toBeGreaterThan(0.75);
    expect(dryRun).toBeGreaterThan(0.75);
    expect(sealLeak).toBeGreaterThan(0.65);
    for (const auc of [cavitation, dryRun, sealLeak]) expect(auc).toBeLessThan(0.99);
    const wetShare = (condition: string) => {
      const group = readings.filter((reading) => reading.condition === condition);
      return group.filter((reading) => reading.leakSensorWet).length / group.length;
    };
    expect(wetShare('seal-leak')).toBeGreaterThan(0.3);
    expect(wetShare('normal')).toBeLessThan(0.05);
  });

  it('refuses fault rates that are not shares summing below 1', () => {
    expect(() => new PumpStationTelemetry({ seed: 1, faultRates: { cavitation: 0.5, 'seal-leak': 0.3, 'dry-run': 0.3 } })).toThrow(/summing to less than 1/);
    expect(() => new PumpStationTelemetry({ seed: 1, faultRates: { cavitation: -0.1, 'seal-leak': 0, 'dry-run': 0 } })).toThrow(/shares ≥ 0/);
  });
});

describe('the shipped example of the demo config', () => {
  it('is what the demo writes, with the schema shipped beside it, and loads as a valid config', async () => {
    const expected = renderDemoConfig({
      brokers: '127.0.0.1:9092',
      topics: demoTopics('raretide-demo'),
      schemaFile: 'config/examples/schemas/pump-station-telemetry.avsc',
      modelDir: 'raretide-demo/model',
      seed: 1,
      epochs: DEFAULT_DEMO_EPOCHS,
      metricsPort: 0,
    });
    expect(await readFile('config/examples/pump-station.yaml', 'utf8')).toBe(expected);
    const config = await loadConfigFile('config/examples/pump-station.yaml');
    expect(config.balance?.targets).toEqual(DEMO_TARGETS);
    expect(config.label).toEqual({ from: 'field', path: 'condition' });
    expect(config.source?.framing).toEqual({ kind: 'raw', schemaFile: 'config/examples/schemas/pump-station-telemetry.avsc' });
    expect(config.fields).toEqual({ readingId: 'fresh', stationId: 'copy' });
  });

  it('ships the scenario schema unchanged', async () => {
    expect(JSON.parse(await readFile('config/examples/schemas/pump-station-telemetry.avsc', 'utf8'))).toEqual(PUMP_STATION_SCHEMA);
  });
});
