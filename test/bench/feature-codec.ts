/**
 * Benchmark: Avro binary → record (avsc) → features (the codec), on a 20-field record of an invented
 * scenario: readings from refrigerated containers ("reefers") aboard a small feeder line's ships.
 * Prints records/s for each stage and for the two together, side by side in one run; asserts nothing.
 *
 *   npx tsx test/bench/feature-codec.ts [records]
 */
import { performance } from 'node:perf_hooks';
import avro from 'avsc';
import { FeatureCodec } from '../../model/features/index.js';
import { seededRandom } from '../support/seeded-random.js';

const reeferReadingSchema = {
  type: 'record',
  name: 'ReeferReading',
  namespace: 'dev.raretide.bench',
  fields: [
    { name: 'readingId', type: { type: 'string', logicalType: 'uuid' } },
    { name: 'containerId', type: 'string' },
    { name: 'vessel', type: 'string' },
    { name: 'recordedAt', type: { type: 'long', logicalType: 'timestamp-millis' } },
    { name: 'setpointC', type: 'float' },
    { name: 'supplyAirC', type: 'double' },
    { name: 'returnAirC', type: 'double' },
    { name: 'relativeHumidity', type: 'float' },
    { name: 'oxygenPercent', type: ['null', 'double'] },
    { name: 'carbonDioxidePercent', type: ['null', 'double'] },
    { name: 'compressorOn', type: 'boolean' },
    { name: 'defrostActive', type: 'boolean' },
    { name: 'mode', type: { type: 'enum', name: 'ReeferMode', symbols: ['CHILL', 'FROZEN', 'CONTROLLED_ATMOSPHERE', 'OFF'] } },
    { name: 'powerSource', type: { type: 'enum', name: 'PowerSource', symbols: ['SHIP', 'SHORE', 'GENSET'] } },
    { name: 'alarmCode', type: ['null', 'string'] },
    {
      name: 'position',
      type: { type: 'record', name: 'Position', fields: [{ name: 'latitude', type: 'double' }, { name: 'longitude', type: 'double' }] },
    },
    { name: 'doorOpenSeconds', type: 'int' },
    { name: 'batteryMillivolts', type: 'int' },
    { name: 'firmware', type: 'string' },
    { name: 'condition', type: { type: 'enum', name: 'Condition', symbols: ['NORMAL', 'WARNING', 'FAULT'] } },
  ],
};

function readings(count: number, seed: number): Record<string, unknown>[] {
  const random = seededRandom(seed);
  const pick = <T>(items: readonly T[]): T => items[Math.floor(random() * items.length)]!;
  const hex = (digits: number): string => Array.from({ length: digits }, () => Math.floor(random() * 16).toString(16)).join('');
  return Array.from({ length: count }, (_, i) => {
    const mode = pick(['CHILL', 'CHILL', 'FROZEN', 'FROZEN', 'FROZEN', 'CONTROLLED_ATMOSPHERE', 'OFF']);
    const setpoint = mode === 'FROZEN' ? pick([-18, -20, -25]) : mode === 'OFF' ? 0 : pick([2, 4, 13]);
    const supply = setpoint + (random() - 0.5) * 1.5;
    const roll = random();
    const controlled = mode === 'CONTROLLED_ATMOSPHERE';
    return {
      readingId: `${hex(8)}-${hex(4)}-4${hex(3)}-a${hex(3)}-${hex(12)}`,
      containerId: `RFCU${String(Math.floor(random() * 9_999_999)).padStart(7, '0')}`,
      vessel: pick(['NORDIC FERN', 'SKAGEN TRADER', 'ARCTIC PIKE', 'BALTIC WREN', 'ODER STAR', 'LOFOTEN']),
      recordedAt: 1_717_000_000_000 + i * 15_000,
      setpointC: setpoint,
      supplyAirC: Math.round(supply * 100) / 100,
      returnAirC: Math.round((supply + 1 + random() * 2) * 100) / 100,
      relativeHumidity: Math.fround(60 + random() * 35),
      oxygenPercent: controlled ? Math.round((3 + random() * 4) * 10) / 10 : null,
      carbonDioxidePercent: controlled ? Math.round((5 + random() * 5) * 10) / 10 : null,
      compressorOn: random() < 0.8,
      defrostActive: random() < 0.05,
      mode,
      powerSource: pick(['SHIP', 'SHIP', 'SHIP', 'SHORE', 'GENSET']),
      alarmCode: roll < 0.9 ? null : pick(['AL20', 'AL54', 'AL86']),
      position: { latitude: 54 + random() * 6, longitude: 4 + random() * 20 },
      doorOpenSeconds: random() < 0.97 ? 0 : Math.floor(random() * 600),
      batteryMillivolts: 3400 + Math.floor(random() * 800),
      firmware: pick(['5.2.1', '5.2.1', '5.3.0']),
      condition: roll < 0.97 ? 'NORMAL' : roll < 0.995 ? 'WARNING' : 'FAULT',
    };
  });
}

/** Best records/s over `rounds` timed passes of `pass` (each handling `count` records), after one warm-up. */
function recordsPerSecond(count: number, rounds: number, pass: () => void): number {
  pass();
  let best = 0;
  for (let round = 0; round < rounds; round++) {
    const start = performance.now();
    pass();
    best = Math.max(best, count / ((performance.now() - start) / 1000));
  }
  return best;
}

const count = Number(process.argv[2] ?? 50_000);
const type = avro.Type.forSchema(reeferReadingSchema as avro.Schema);
const records = readings(count, 7);
const buffers = records.map((record) => type.toBuffer(record));
const decodedRecords = buffers.map((buffer) => type.fromBuffer(buffer) as Record<string, unknown>);
const buildStart = performance.now();
const codec = FeatureCodec.fromSample(reeferReadingSchema, decodedRecords.slice(0, 10_000), { labelPath: 'condition' });
const buildMs = performance.now() - buildStart;
const features = new Float32Array(count * codec.width);
let sink = 0;

const decodeOnly = recordsPerSecond(count, 5, () => {
  for (const buffer of buffers) sink += (type.fromBuffer(buffer) as { doorOpenSeconds: number }).doorOpenSeconds;
});
const encodeOnly = recordsPerSecond(count, 5, () => {
  for (let i = 0; i < count; i++) codec.encode(decodedRecords[i]!, features, i);
});
const decodeAndEncode = recordsPerSecond(count, 5, () => {
  for (let i = 0; i < count; i++) codec.encode(type.fromBuffer(buffers[i]!) as Record<string, unknown>, features, i);
});
const featureDecode = recordsPerSecond(count, 5, () => {
  for (let i = 0; i < count; i++) sink += codec.decode(features, decodedRecords[i]!, { row: i }).doorOpenSeconds as number;
});

const averageBytes = buffers.reduce((sum, buffer) => sum + buffer.length, 0) / count;
const line = (name: string, perSecond: number): string =>
  `${name.padEnd(44)}${Math.round(perSecond).toLocaleString('en-US').padStart(12)} records/s  ${(1e6 / perSecond).toFixed(2).padStart(7)} µs/record`;
console.log(`feature codec benchmark — node ${process.version}, ${count.toLocaleString('en-US')} records, best of 5`);
console.log(`record: 20 fields, ${averageBytes.toFixed(0)} bytes of Avro binary; features: ${codec.width}; codec built from 10,000 records in ${buildMs.toFixed(0)} ms`);
console.log(line('avsc decode (binary → record)', decodeOnly));
console.log(line('feature encode (record → features)', encodeOnly));
console.log(line('avsc decode + feature encode', decodeAndEncode));
console.log(line('feature decode (features + source → record)', featureDecode));
console.log(`feature encode costs ${(decodeOnly / encodeOnly).toFixed(2)}× an avsc decode; together they run at ${(decodeAndEncode / decodeOnly).toFixed(2)}× decode-only speed`);
if (sink === Number.MIN_VALUE) console.log('');
