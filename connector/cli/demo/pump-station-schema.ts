/**
 * The Avro schema of the demo's data: an INVENTED scenario of our own, not real data. A water utility's
 * pump stations report one reading per pump a minute; a few readings show a fault developing. The
 * shipped copy `config/examples/schemas/pump-station-telemetry.avsc` is this schema, checked by a test.
 */

/** The classes of `condition`, the label; every one but `normal` is a rare fault class. */
export const PUMP_CONDITIONS = ['normal', 'cavitation', 'seal-leak', 'dry-run'] as const;
export type PumpCondition = (typeof PUMP_CONDITIONS)[number];
export type PumpFault = Exclude<PumpCondition, 'normal'>;

export const PUMP_MODES = ['AUTO', 'REMOTE', 'MANUAL'] as const;
export type PumpMode = (typeof PUMP_MODES)[number];

const INVENTED = 'INVENTED demo scenario (raretide demo): not real data; no real utility, station or pump.';

export const PUMP_STATION_SCHEMA = {
  type: 'record',
  name: 'PumpStationTelemetry',
  namespace: 'dev.raretide.demo.pumpstation',
  doc: `${INVENTED} One reading of one pump of a water utility's pump station; \`condition\` is the class.`,
  fields: [
    { name: 'readingId', type: 'long', doc: 'Sequence number of the reading.' },
    { name: 'stationId', type: 'string', doc: 'Pump station, PS-01 to PS-24.' },
    { name: 'observedAt', type: { type: 'long', logicalType: 'timestamp-millis' }, doc: 'When the reading was taken.' },
    { name: 'pumpMode', type: { type: 'enum', name: 'PumpMode', symbols: [...PUMP_MODES] }, doc: 'Who drives the pump: the station PLC, the control room, or an operator on site.' },
    { name: 'flowLps', type: 'double', doc: 'Discharge flow, litres per second.' },
    { name: 'suctionPressureKpa', type: 'double', doc: 'Suction pressure (gauge), kPa.' },
    { name: 'dischargePressureKpa', type: 'double', doc: 'Discharge pressure (gauge), kPa.' },
    { name: 'vibrationMmS', type: 'double', doc: 'Bearing vibration velocity, mm/s RMS.' },
    { name: 'motorCurrentA', type: 'double', doc: 'Motor current, amperes.' },
    { name: 'motorTempC', type: 'double', doc: 'Motor winding temperature, °C.' },
    { name: 'wetWellLevelM', type: 'double', doc: 'Water level in the wet well above the pump inlet, metres.' },
    { name: 'speedRpm', type: 'int', doc: 'Shaft speed, revolutions per minute.' },
    { name: 'startsLastHour', type: 'int', doc: 'Pump starts in the last hour.' },
    { name: 'leakSensorWet', type: 'boolean', doc: 'The seal chamber moisture probe reads wet.' },
    { name: 'upstreamFlowLps', type: ['null', 'double'], default: null, doc: 'Inflow at the upstream meter, litres per second; null while the meter is offline.' },
    { name: 'condition', type: 'string', doc: `The class: ${PUMP_CONDITIONS.join(', ')} (labelled afterwards by maintenance).` },
  ],
} as const;

/** A reading as avsc reads and writes it. */
export interface PumpStationReading {
  readingId: number;
  stationId: string;
  observedAt: number;
  pumpMode: PumpMode;
  flowLps: number;
  suctionPressureKpa: number;
  dischargePressureKpa: number;
  vibrationMmS: number;
  motorCurrentA: number;
  motorTempC: number;
  wetWellLevelM: number;
  speedRpm: number;
  startsLastHour: number;
  leakSensorWet: boolean;
  upstreamFlowLps: number | null;
  condition: PumpCondition;
}
