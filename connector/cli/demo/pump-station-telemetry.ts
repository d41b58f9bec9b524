/**
 * Readings of the demo's INVENTED scenario (see pump-station-schema.ts): made up from a seeded
 * generator, not measured anywhere. The physics is rough but consistent, so the faults leave signs a
 * classifier can learn — imperfectly: each fault comes with a random severity, mostly mild, and mild
 * cases look much like normal readings (a random forest on 30,000 readings scored PR-AUC ≈ 0.7 for
 * cavitation, ≈ 0.3 for seal-leak and ≈ 0.8 for dry-run on the next 10,000, seeds 1 and 7):
 * - cavitation: a low wet well starves the inlet, so suction pressure falls, vibration rises and the
 *   current swings; flow drops a little.
 * - seal-leak: the seal chamber probe often reads wet; the motor runs warmer and a little rougher.
 * - dry-run: the well is nearly empty, so flow, discharge pressure and current fall while the motor
 *   heats up, and the protection restarts the pump often.
 * Same seed, same readings: every draw comes from the keyed PRNG of model/random.ts.
 */
import { createPrng, type Prng } from '../../../model/random.js';
import type { PumpCondition, PumpFault, PumpMode, PumpStationReading } from './pump-station-schema.js';

/** Share of readings of each fault; `normal` is the rest. */
export type FaultRates = Readonly<Record<PumpFault, number>>;

/** About 4 % faulty readings in all, each fault between 0.5 and 3 %. */
export const DEFAULT_FAULT_RATES: FaultRates = { cavitation: 0.025, 'seal-leak': 0.012, 'dry-run': 0.006 };

export interface TelemetryOptions {
  /** Seed of every draw. */
  readonly seed: number;
  /** @default DEFAULT_FAULT_RATES */
  readonly faultRates?: FaultRates;
  /** `observedAt` of the first reading, ms since the epoch. @default 2026-01-05T00:00:00Z */
  readonly startMs?: number;
  /** Time between readings (24 stations, one pump each, a reading a minute). @default 2500 */
  readonly intervalMs?: number;
  /** `readingId` of the first reading. @default 1 */
  readonly firstReadingId?: number;
}

const STATION_COUNT = 24;
/** Stations are part of the scenario, the same whatever the seed; only readings change with it. */
const STATION_SEED = 0x5eed_57a7;
const DEFAULT_START_MS = Date.UTC(2026, 0, 5);
const HOUR_MS = 3_600_000;
/** Pressure of a metre of water, kPa (ρ·g ≈ 1000 kg/m³ × 9.81 m/s²). */
const KPA_PER_METRE = 9.81;

interface Station {
  readonly id: string;
  /** Flow at the duty point, L/s. */
  readonly designFlow: number;
  /** Discharge pressure the pump works against at zero flow, kPa. */
  readonly staticHead: number;
  /** kPa per (L/s)² of pipe friction. */
  readonly friction: number;
  readonly nominalRpm: number;
  /** Older bearings run rougher: scales the station's vibration. */
  readonly bearingWear: number;
}

function stations(): Station[] {
  const random = createPrng(STATION_SEED);
  return Array.from({ length: STATION_COUNT }, (_, index) => ({
    id: `PS-${String(index + 1).padStart(2, '0')}`,
    designFlow: between(random, 50, 140),
    staticHead: between(random, 180, 320),
    friction: between(random, 0.004, 0.012),
    nominalRpm: random.uniform() < 0.7 ? 1480 : 985,
    bearingWear: between(random, 0.7, 1.6),
  }));
}

/** A stream of readings; call `next` once per reading. */
export class PumpStationTelemetry {
  private readonly random: Prng;
  private readonly stations = stations();
  private readonly faultRates: FaultRates;
  private readonly startMs: number;
  private readonly intervalMs: number;
  private index = 0;

  constructor(private readonly options: TelemetryOptions) {
    this.random = createPrng(options.seed);
    this.faultRates = options.faultRates ?? DEFAULT_FAULT_RATES;
    this.startMs = options.startMs ?? DEFAULT_START_MS;
    this.intervalMs = options.intervalMs ?? 2500;
    const total = Object.values(this.faultRates).reduce((sum, rate) => sum + rate, 0);
    if (Object.values(this.faultRates).some((rate) => !(rate >= 0)) || total >= 1) {
      throw new RangeError(`fault rates must be shares ≥ 0 summing to less than 1, got ${JSON.stringify(this.faultRates)}`);
    }
  }

  /** The next reading; `observedAt` defaults to the start time plus the interval per reading. */
  next(observedAt = this.startMs + this.index * this.intervalMs): PumpStationReading {
    const random = this.random;
    const readingId = (this.options.firstReadingId ?? 1) + this.index;
    this.index += 1;
    const station = this.stations[random.integer(STATION_COUNT)]!;
    const condition = this.drawCondition();
    // How far the fault has gone, mostly not far: mild cases look much like normal readings.
    const severity = condition === 'normal' ? 0 : 0.15 + 0.85 * random.uniform() ** 1.5;
    const is = (fault: PumpFault): number => (condition === fault ? severity : 0);
    // Demand follows the day: highest in the morning and evening, lowest at night.
    const hour = (observedAt % (24 * HOUR_MS)) / HOUR_MS;
    const demand = 0.8 + 0.12 * Math.sin((2 * Math.PI * (hour - 6)) / 24) + 0.08 * Math.sin((4 * Math.PI * (hour - 7)) / 24);

    // The well runs low now and then in normal operation too; a starving or dry pump sees it low.
    const level = Math.max(0.02, between(random, 0.4, 3.0) * (1 - 0.6 * is('cavitation') - 0.9 * is('dry-run')));
    const flow = Math.max(0, station.designFlow * demand * (1 + 0.07 * random.normal()) * (1 - 0.2 * is('cavitation') - 0.85 * is('dry-run')));
    const suction = KPA_PER_METRE * level + 6 + 2 * random.normal() - 14 * is('cavitation');
    const discharge = (station.staticHead + station.friction * flow * flow) * (1 - 0.5 * is('dry-run')) + 10 * random.normal();
    // No load, little current: a dry pump draws less; a cavitating one swings.
    const current = 22 + 0.36 * flow + (2.5 + 5 * is('cavitation')) * random.normal() + 3 * is('seal-leak');
    const vibration = station.bearingWear * 2 * Math.exp(0.3 * random.normal()) * (1 + 2 * is('cavitation') + 0.4 * is('seal-leak') + 0.5 * is('dry-run'));
    const temperature = 38 + 0.2 * current + 3.5 * random.normal() + 7 * is('seal-leak') + 16 * is('dry-run');
    const speed = station.nominalRpm * (1 + 0.005 * is('dry-run')) + 4 * random.normal();
    const starts = poissonSmall(random, 0.6 + 5 * is('dry-run'));
    const leakWet = random.uniform() < 0.02 + 0.8 * is('seal-leak');
    const upstream = random.uniform() < 0.85 ? Math.max(0, flow * (0.9 + 0.2 * random.uniform()) + 3 * random.normal()) : null;
    return {
      readingId,
      stationId: station.id,
      observedAt: Math.round(observedAt),
      pumpMode: this.drawMode(condition),
      flowLps: round(flow, 1),
      suctionPressureKpa: round(suction, 1),
      dischargePressureKpa: round(discharge, 1),
      vibrationMmS: round(vibration, 2),
      motorCurrentA: round(Math.max(0, current), 1),
      motorTempC: round(temperature, 1),
      wetWellLevelM: round(level, 2),
      speedRpm: Math.round(speed),
      startsLastHour: starts,
      leakSensorWet: leakWet,
      upstreamFlowLps: upstream === null ? null : round(upstream, 1),
      condition,
    };
  }

  /** `count` readings in a row. */
  take(count: number): PumpStationReading[] {
    return Array.from({ length: count }, () => this.next());
  }

  private drawCondition(): PumpCondition {
    let draw = this.random.uniform();
    for (const [fault, rate] of Object.entries(this.faultRates) as [PumpFault, number][]) {
      if (draw < rate) return fault;
      draw -= rate;
    }
    return 'normal';
  }

  /** Mostly the station PLC; operators on site more often when a pump keeps tripping dry. */
  private drawMode(condition: PumpCondition): PumpMode {
    const manual = condition === 'dry-run' ? 0.2 : 0.04;
    const draw = this.random.uniform();
    return draw < manual ? 'MANUAL' : draw < manual + 0.08 ? 'REMOTE' : 'AUTO';
  }
}

function between(random: Prng, low: number, high: number): number {
  return low + (high - low) * random.uniform();
}

/** A Poisson draw by multiplying uniforms (Knuth's method, common practice), fine for a small mean. */
function poissonSmall(random: Prng, mean: number): number {
  const limit = Math.exp(-mean);
  let count = 0;
  for (let product = random.uniform(); product > limit; product *= random.uniform()) count += 1;
  return count;
}

function round(value: number, decimals: number): number {
  const scale = 10 ** decimals;
  return Math.round(value * scale) / scale;
}
