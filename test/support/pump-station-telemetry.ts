import avro from 'avsc';

import { seededRandom } from './seeded-random.js';

/**
 * Test data of an invented scenario: telemetry from the pumps of a town's sewage lift stations,
 * readings a minute apart. 27 fields, ~200 bytes of Avro binary per record — the
 * shape and size the worker is benchmarked on.
 */
export const pumpStationReadingSchema = {
  type: 'record',
  name: 'PumpStationReading',
  namespace: 'dev.raretide.demo',
  fields: [
    { name: 'readingId', type: 'long' },
    { name: 'stationId', type: 'string' },
    { name: 'siteName', type: 'string' },
    { name: 'gateway', type: 'string' },
    { name: 'pumpId', type: 'int' },
    { name: 'pumpSerial', type: 'string' },
    { name: 'controllerFirmware', type: 'string' },
    { name: 'observedAt', type: { type: 'long', logicalType: 'timestamp-millis' } },
    { name: 'status', type: { type: 'enum', name: 'PumpStatus', symbols: ['RUNNING', 'IDLE', 'STARTING', 'TRIPPED', 'MAINTENANCE'] } },
    {
      name: 'location',
      type: {
        type: 'record',
        name: 'StationLocation',
        fields: [
          { name: 'latitude', type: 'double' },
          { name: 'longitude', type: 'double' },
          { name: 'elevationM', type: 'float' },
        ],
      },
    },
    { name: 'flowRateLps', type: 'double' },
    { name: 'flowTotalM3', type: 'double' },
    { name: 'suctionPressureKpa', type: 'float' },
    { name: 'dischargePressureKpa', type: 'float' },
    { name: 'motorCurrentA', type: 'float' },
    { name: 'motorTempC', type: 'float' },
    { name: 'bearingVibrationMmS', type: 'float' },
    { name: 'speedRpm', type: 'int' },
    { name: 'powerKw', type: 'double' },
    { name: 'powerFactor', type: 'float' },
    { name: 'wetWellLevelM', type: 'double' },
    { name: 'valveOpenPct', type: 'float' },
    { name: 'runHours', type: 'long' },
    { name: 'startsToday', type: 'int' },
    { name: 'inflowEstimateLps', type: ['null', 'double'], default: null },
    { name: 'alarmCodes', type: { type: 'array', items: 'string' } },
    { name: 'operatorNote', type: ['null', 'string'], default: null },
  ],
} as const;

export type PumpStatus = 'RUNNING' | 'IDLE' | 'STARTING' | 'TRIPPED' | 'MAINTENANCE';

export interface PumpStationReading {
  readingId: number;
  stationId: string;
  siteName: string;
  gateway: string;
  pumpId: number;
  pumpSerial: string;
  controllerFirmware: string;
  observedAt: number;
  status: PumpStatus;
  location: { latitude: number; longitude: number; elevationM: number };
  flowRateLps: number;
  flowTotalM3: number;
  suctionPressureKpa: number;
  dischargePressureKpa: number;
  motorCurrentA: number;
  motorTempC: number;
  bearingVibrationMmS: number;
  speedRpm: number;
  powerKw: number;
  powerFactor: number;
  wetWellLevelM: number;
  valveOpenPct: number;
  runHours: number;
  startsToday: number;
  inflowEstimateLps: number | null;
  alarmCodes: string[];
  operatorNote: string | null;
}

export const pumpStationReadingType = avro.Type.forSchema(pumpStationReadingSchema as unknown as avro.Schema);

// Site names include non-ASCII letters on purpose: they also travel as header values.
const SITES = ['Riverside North', 'Mill Lane', 'Harbour Quay', 'Østre Bakke', 'Gänsewiese', 'Old Tannery', 'Kingfisher Way', 'São Brás'];
const NOTES = ['impeller cleared of rags', 'seal water low, topped up', 'float switch sticking', 'contractor on site, pump isolated'];
const FAULT_ALARMS = ['HIGH_VIBRATION', 'MOTOR_OVERTEMP', 'OVERCURRENT', 'DRY_RUN'];
const START_TIME = Date.UTC(2024, 2, 4, 6, 0, 0);

/**
 * Deterministic readings from `seed`: 40 stations of 1–3 pumps; most pumps run or idle,
 * a few trip (with alarms, no flow) or sit in maintenance (often with a note).
 * Floats are rounded through `Math.fround` so a decoded record equals its source exactly.
 */
export function pumpStationReadings(seed: number): (readingId: number) => PumpStationReading {
  const random = seededRandom(seed);
  const between = (low: number, high: number) => low + (high - low) * random();
  const pick = <T>(items: readonly T[]) => items[Math.floor(random() * items.length)] as T;
  return (readingId) => {
    const station = Math.floor(random() * 40);
    const pumpId = 1 + Math.floor(random() * 3);
    const roll = random();
    const status: PumpStatus = roll < 0.6 ? 'RUNNING' : roll < 0.9 ? 'IDLE' : roll < 0.95 ? 'STARTING' : roll < 0.98 ? 'TRIPPED' : 'MAINTENANCE';
    const running = status === 'RUNNING' || status === 'STARTING';
    const flow = running ? between(20, 180) : 0;
    const siteName = `${SITES[station % SITES.length]} ${1 + Math.floor(station / SITES.length)}`;
    return {
      readingId,
      stationId: `LS-${String(station).padStart(4, '0')}`,
      siteName,
      gateway: `gw-${station % 7}.telemetry.waterworks.test`,
      pumpId,
      pumpSerial: `PX${2015 + (station % 9)}-${String(station * 3 + pumpId).padStart(6, '0')}`,
      controllerFirmware: `pumpctl ${4 + (station % 2)}.${station % 5}.${(station * 7) % 23}`,
      observedAt: START_TIME + readingId * 60_000,
      status,
      location: { latitude: 55.6 + station * 0.011, longitude: 12.5 + station * 0.017, elevationM: Math.fround(4 + station * 0.5) },
      flowRateLps: flow,
      flowTotalM3: 100_000 + readingId * 3.7 + between(0, 1),
      suctionPressureKpa: Math.fround(between(5, 40)),
      dischargePressureKpa: Math.fround(running ? between(180, 420) : between(5, 40)),
      motorCurrentA: Math.fround(running ? between(40, 95) : 0),
      motorTempC: Math.fround(running ? between(45, 80) : between(12, 25)),
      bearingVibrationMmS: Math.fround(status === 'TRIPPED' ? between(9, 20) : running ? between(1, 4.5) : between(0, 0.3)),
      speedRpm: running ? Math.round(between(1_400, 1_480)) : 0,
      powerKw: running ? between(22, 75) : 0,
      powerFactor: Math.fround(running ? between(0.8, 0.92) : 0),
      wetWellLevelM: between(0.4, 3.2),
      valveOpenPct: Math.fround(running ? between(60, 100) : 0),
      runHours: 20_000 + Math.floor(readingId / 60),
      startsToday: Math.floor(between(0, 24)),
      inflowEstimateLps: random() < 0.7 ? between(5, 150) : null,
      alarmCodes: status === 'TRIPPED' ? [pick(FAULT_ALARMS), 'PUMP_TRIPPED'] : random() < 0.05 ? ['HIGH_WELL_LEVEL'] : [],
      operatorNote: status === 'MAINTENANCE' || random() < 0.1 ? pick(NOTES) : null,
    };
  };
}
