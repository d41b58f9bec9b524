import { seededRandom } from '../../support/seeded-random.js';

/**
 * Test data of an invented scenario: visits of ships to the berths of a small harbour, with one field
 * of every kind the codec must handle (nested and nullable records, enums, logical types, arrays, maps,
 * bytes, fixed, a two-type union) and a rare `INCIDENT` outcome as the label.
 */
export const berthVisitSchema = {
  type: 'record',
  name: 'BerthVisit',
  namespace: 'test.raretide.harbour',
  fields: [
    { name: 'visitId', type: { type: 'string', logicalType: 'uuid' } },
    { name: 'vesselCode', type: 'string' },
    { name: 'berth', type: { type: 'enum', name: 'Berth', symbols: ['NORTH', 'SOUTH', 'EAST'] } },
    { name: 'arrivedAt', type: { type: 'long', logicalType: 'timestamp-millis' } },
    { name: 'draughtM', type: 'double' },
    { name: 'crew', type: 'int' },
    { name: 'pilotOnBoard', type: 'boolean' },
    { name: 'flag', type: 'string' },
    { name: 'windKnots', type: ['null', 'float'] },
    {
      name: 'cargo',
      type: {
        type: 'record',
        name: 'Cargo',
        fields: [
          { name: 'teu', type: 'long' },
          { name: 'hazard', type: ['null', { type: 'enum', name: 'Hazard', symbols: ['FLAMMABLE', 'TOXIC', 'CORROSIVE'] }] },
          { name: 'manifestRef', type: 'string' },
        ],
      },
    },
    {
      name: 'inspection',
      type: ['null', { type: 'record', name: 'Inspection', fields: [{ name: 'score', type: 'int' }, { name: 'passed', type: 'boolean' }] }],
    },
    {
      name: 'delayNote',
      type: ['null', { type: 'record', name: 'DelayNote', fields: [{ name: 'author', type: 'string' }, { name: 'minutes', type: 'int' }] }],
    },
    { name: 'tags', type: { type: 'array', items: 'string' } },
    { name: 'tideReadings', type: { type: 'map', values: 'double' } },
    { name: 'checksum', type: { type: 'fixed', name: 'Checksum', size: 4 } },
    { name: 'payload', type: 'bytes' },
    { name: 'quayRef', type: ['int', 'string'] },
    { name: 'outcome', type: { type: 'enum', name: 'Outcome', symbols: ['ON_TIME', 'DELAYED', 'INCIDENT'] } },
  ],
} as const;

const FLAGS = ['NO', 'NO', 'NO', 'DK', 'DK', 'SE', 'FI', 'DE'];

function hex(random: () => number, digits: number): string {
  let text = '';
  for (let i = 0; i < digits; i++) text += Math.floor(random() * 16).toString(16);
  return text;
}

/** `count` visits, the same for the same seed. Floats are float32 values, as avsc reads them. */
export function berthVisits(count: number, seed = 1): Record<string, unknown>[] {
  const random = seededRandom(seed);
  const pick = <T>(items: readonly T[]): T => items[Math.floor(random() * items.length)]!;
  return Array.from({ length: count }, (_, i) => {
    const roll = random();
    const outcome = roll < 0.05 ? 'INCIDENT' : roll < 0.3 ? 'DELAYED' : 'ON_TIME';
    return {
      visitId: `${hex(random, 8)}-${hex(random, 4)}-4${hex(random, 3)}-a${hex(random, 3)}-${hex(random, 12)}`,
      vesselCode: `IMO${9_000_000 + Math.floor(random() * 999_999)}`,
      berth: pick(['NORTH', 'SOUTH', 'EAST'] as const),
      arrivedAt: 1_700_000_000_000 + i * 3_600_000,
      draughtM: Math.round((4 + 8 * random()) * 100) / 100,
      crew: 6 + Math.floor(random() * 20),
      pilotOnBoard: random() < 0.7,
      flag: pick(FLAGS),
      windKnots: random() < 0.1 ? null : Math.fround(Math.round(random() * 400) / 10),
      cargo: {
        teu: Math.floor(random() * 4000),
        hazard: random() < 0.8 ? null : pick(['FLAMMABLE', 'TOXIC', 'CORROSIVE'] as const),
        manifestRef: `M-${hex(random, 10)}`,
      },
      inspection: random() < 0.5 ? null : { score: Math.floor(random() * 100), passed: random() < 0.9 },
      delayNote: outcome === 'ON_TIME' ? null : { author: `officer ${hex(random, 6)}`, minutes: 5 * Math.floor(random() * 40) },
      tags: random() < 0.5 ? [] : ['reefer', pick(['night', 'day'])],
      tideReadings: { high: Math.round(random() * 300) / 100, low: -Math.round(random() * 100) / 100 },
      checksum: Buffer.from([i & 0xff, (i >> 8) & 0xff, 7, 9]),
      payload: Buffer.from(hex(random, 12), 'utf8'),
      quayRef: random() < 0.5 ? Math.floor(random() * 40) : `Q${Math.floor(random() * 40)}`,
      outcome,
    };
  });
}
