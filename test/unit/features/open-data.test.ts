import { readFileSync } from 'node:fs';
import avro from 'avsc';
import { describe, expect, it } from 'vitest';
import { FeatureCodec } from '../../../model/features/index.js';
import { createPrng } from '../../../model/random.js';
import { seattleWeatherRows, seattleWeatherSchema, seattleWeatherType } from '../../support/open-data/seattle-weather.js';

const dataFile = (name: string): URL => new URL(`../../../node_modules/vega-datasets/data/${name}`, import.meta.url);

/** Fields of `actual` that differ from `expected`: numbers beyond 1e-9 relative, anything else not identical. */
function differingFields(actual: Record<string, unknown>, expected: Record<string, unknown>): string[] {
  const keys = new Set([...Object.keys(actual), ...Object.keys(expected)]);
  return [...keys].filter((key) => {
    const [a, b] = [actual[key], expected[key]];
    if (typeof b === 'number') return typeof a !== 'number' || Math.abs(a - b) > 1e-9 * Math.abs(b);
    return a !== b;
  });
}

/** Two-sample Kolmogorov–Smirnov statistic: the largest gap between the two empirical CDFs. */
function ksStatistic(a: readonly number[], b: readonly number[]): number {
  const x = [...a].sort((p, q) => p - q);
  const y = [...b].sort((p, q) => p - q);
  let i = 0;
  let j = 0;
  let statistic = 0;
  while (i < x.length && j < y.length) {
    const value = Math.min(x[i]!, y[j]!);
    while (i < x.length && x[i]! <= value) i++;
    while (j < y.length && y[j]! <= value) j++;
    statistic = Math.max(statistic, Math.abs(i / x.length - j / y.length));
  }
  return statistic;
}

/** Through Avro binary and back, so the codec sees records exactly as the worker's decoder gives them. */
function throughAvro(type: avro.Type, rows: readonly Record<string, unknown>[]): Record<string, unknown>[] {
  return rows.map((row) => type.fromBuffer(type.toBuffer(row)) as Record<string, unknown>);
}

function roundTripEveryRow(codec: FeatureCodec, type: avro.Type, records: readonly Record<string, unknown>[]): void {
  const problems: string[] = [];
  records.forEach((record, row) => {
    const decoded = codec.decode(codec.encode(record), record);
    const differing = differingFields(decoded, record);
    if (differing.length > 0) problems.push(`row ${row}: ${differing.join(', ')}`);
    if (!type.isValid(decoded) || !type.toBuffer(decoded).equals(type.toBuffer(record))) problems.push(`row ${row}: Avro bytes differ`);
  });
  expect(problems).toEqual([]);
}

// Daily weather in Seattle 2012–2015 (NOAA daily records via vega-datasets; see test/support/open-data).
describe('open data: Seattle daily weather (NOAA, via vega-datasets)', () => {
  const weatherSchema = seattleWeatherSchema;
  const type = seattleWeatherType;
  const rows = seattleWeatherRows();
  const records = throughAvro(type, rows);
  const codec = FeatureCodec.fromSample(weatherSchema, records, { labelPath: 'weather' });

  it('reads all 1,461 days and infers the expected fields', () => {
    expect(records).toHaveLength(1461);
    expect(codec.classes).toEqual(['drizzle', 'rain', 'sun', 'snow', 'fog']);
    expect(codec.classCounts.find((entry) => entry.name === 'snow')?.count).toBe(26);
    expect(codec.layout.blocks.map((block) => `${block.kind}:${block.path}`)).toEqual([
      'continuous:precipitation',
      'continuous:temp_max',
      'continuous:temp_min',
      'continuous:wind',
    ]);
  });

  it('round-trips every row exactly through encode and decode; avsc encodes the decoded record', () => {
    roundTripEveryRow(codec, type, records);
  });

  it('decodes standard normal features to each field\'s marginal (two-sample KS below the 5 % critical value)', () => {
    const prng = createPrng(2024);
    const draws = 4000;
    for (const block of codec.layout.blocks) {
      const decoded: number[] = [];
      const features = new Float32Array(codec.width);
      for (let i = 0; i < draws; i++) {
        features[block.offset] = prng.normal();
        decoded.push(codec.decode(features, records[0]!)[block.path] as number);
      }
      const real = records.map((record) => record[block.path] as number);
      // Handbook large-sample critical value at α = 0.05: 1.36·sqrt((n+m)/(n·m)) (REFERENCE-FACTS.md, KS).
      const critical = 1.36 * Math.sqrt((draws + real.length) / (draws * real.length));
      expect(ksStatistic(decoded, real)).toBeLessThan(critical);
    }
  });
});

// Palmer Archipelago penguins: Palmer Station Antarctica LTER, Gorman, Williams & Fraser 2014
// (PLoS ONE 9(3): e90081), CC0, as shipped by vega-datasets (data/penguins.json). It has missing values.
describe('open data: Palmer penguins (Gorman et al. 2014, via vega-datasets)', () => {
  const nullableDouble = ['null', 'double'];
  const penguinSchema = {
    type: 'record',
    name: 'Penguin',
    namespace: 'test.raretide.opendata',
    fields: [
      { name: 'species', type: { type: 'enum', name: 'Species', symbols: ['Adelie', 'Chinstrap', 'Gentoo'] } },
      { name: 'island', type: { type: 'enum', name: 'Island', symbols: ['Biscoe', 'Dream', 'Torgersen'] } },
      { name: 'beakLengthMm', type: nullableDouble },
      { name: 'beakDepthMm', type: nullableDouble },
      { name: 'flipperLengthMm', type: ['null', 'int'] },
      { name: 'bodyMassG', type: ['null', 'int'] },
      // MALE, FEMALE, null, and one "." as recorded in the data.
      { name: 'sex', type: ['null', 'string'] },
    ],
  };
  const type = avro.Type.forSchema(penguinSchema as avro.Schema);
  const raw = JSON.parse(readFileSync(dataFile('penguins.json'), 'utf8')) as Record<string, string | number | null>[];
  const rows = raw.map((penguin) => ({
    species: penguin['Species'],
    island: penguin['Island'],
    beakLengthMm: penguin['Beak Length (mm)'],
    beakDepthMm: penguin['Beak Depth (mm)'],
    flipperLengthMm: penguin['Flipper Length (mm)'],
    bodyMassG: penguin['Body Mass (g)'],
    sex: penguin['Sex'],
  }));
  const records = throughAvro(type, rows);
  const codec = FeatureCodec.fromSample(penguinSchema, records, { labelPath: 'species' });

  it('reads all 344 penguins, with presence features for the fields that have gaps', () => {
    expect(records).toHaveLength(344);
    expect(records.some((record) => record.bodyMassG === null)).toBe(true);
    expect(codec.classes).toEqual(['Adelie', 'Chinstrap', 'Gentoo']);
    const rows = new Map(codec.describe().rows.map((row) => [row.path, row]));
    expect(rows.get('beakLengthMm')?.encoding).toBe('presence + continuous');
    expect(rows.get('bodyMassG')?.encoding).toBe('presence + continuous');
    expect(rows.get('sex')?.encoding).toBe('presence + categorical');
    expect(rows.get('island')?.encoding).toBe('categorical');
  });

  it('round-trips every row exactly, nulls included; avsc encodes the decoded record', () => {
    roundTripEveryRow(codec, type, records);
  });

  it('survives storage as JSON and round-trips every row the same way', () => {
    roundTripEveryRow(FeatureCodec.fromJSON(JSON.parse(JSON.stringify(codec))), type, records);
  });
});
