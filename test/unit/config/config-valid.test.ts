import { readFile } from 'node:fs/promises';
import { describe, expect, expectTypeOf, it } from 'vitest';
import { loadConfigFile, parseConfig, validateConfig } from '../../../config/load.js';
import type { RaretideConfig } from '../../../config/schema.js';
import { VALID_YAML } from './helpers.js';

describe('valid configs', () => {
  it('fills every default the schema documents', () => {
    const config = parseConfig(VALID_YAML, 'raretide.yaml');
    expect(config.balance).toEqual({
      targets: { jam: 0.05, misroute: 0.03 },
      maxPerRecord: 5,
      temperature: 1,
      seed: 1,
      counting: { mode: 'cumulative' },
    });
    expect(config.kafka).toEqual({ brokers: '127.0.0.1:9092', settings: {} });
    expect(config.sink?.includeOriginals).toBe(false);
    expect(config.sink?.framing).toBeUndefined();
    expect(config.delivery).toEqual({ guarantee: 'at-least-once', batchSize: 500 });
    expect(config.model).toEqual({ dir: 'models/sorter', privacyGuard: { scope: 'source', minDistance: 0.05 } });
    expect(config.metrics).toEqual({ enabled: true, host: '127.0.0.1', port: 9464 });
    expect(config.log).toEqual({ level: 'info', format: 'json' });
    expect(config.fields).toEqual({});
    expect(config.rateCap).toBeUndefined();
    expect(config.training.hidden).toEqual([128, 128]);
  });

  it('accepts a partial file: sections a command does not need may be left out', () => {
    const config = parseConfig('training: {epochs: 5}\n', 'fit-only.yaml');
    expect(config.kafka).toBeUndefined();
    expect(config.source).toBeUndefined();
    expect(config.training.epochs).toBe(5);
    expect(config.training.latent).toBe(8);
  });

  it('reads JSON and YAML alike', () => {
    const fromYaml = parseConfig(VALID_YAML, 'raretide.yaml');
    const fromJson = parseConfig(JSON.stringify(validateConfig(fromYaml)), 'raretide.json');
    expect(fromJson).toEqual(fromYaml);
  });

  it('accepts every framing kind, counting mode and label source', () => {
    const config = validateConfig({
      source: { topic: 'a', group: 'g', framing: { kind: 'single-object', schemaFiles: ['x.avsc', 'y.avsc'] } },
      sink: { topic: 'b', deadLetterTopic: 'c', framing: { kind: 'registry', url: 'https://registry.example:8081' }, includeOriginals: true },
      label: { from: 'header', name: 'event-class' },
      balance: { targets: { jam: 0.2 }, counting: { mode: 'half-life', halfLifeRecords: 50_000 } },
      rateCap: { perSecond: 100, burst: 200, whenExceeded: 'thin' },
    });
    expect(config.balance?.counting).toEqual({ mode: 'half-life', halfLifeRecords: 50_000 });
    expect(config.rateCap?.whenExceeded).toBe('thin');
    expect(validateConfig({ label: { from: 'key' } }).label).toEqual({ from: 'key' });
  });

  it('the shipped minimal example is valid', async () => {
    const config = await loadConfigFile('config/examples/minimal.yaml');
    expect(config.source?.framing.kind).toBe('single-object');
    expect(Object.keys(config.balance?.targets ?? {})).toEqual(['jam', 'misroute']);
    expect(await readFile('config/examples/minimal.yaml', 'utf8')).toMatch(/invented scenario/);
  });

  it('infers its types from the schema', () => {
    const config = parseConfig(VALID_YAML, 'raretide.yaml');
    expectTypeOf(config).toEqualTypeOf<RaretideConfig>();
    expectTypeOf(config.delivery.guarantee).toEqualTypeOf<'at-least-once' | 'exactly-once'>();
    expectTypeOf(config.training.hidden).toEqualTypeOf<number[]>();
    expectTypeOf(config.source).toEqualTypeOf<RaretideConfig['source']>();
  });
});

describe('environment overrides (RARETIDE__SECTION__KEY=value)', () => {
  const load = (env: Record<string, string>): RaretideConfig => parseConfig(VALID_YAML, 'raretide.yaml', { env });

  it('sets a value, matching keys without regard to case or _ . -', () => {
    const config = load({ RARETIDE__BALANCE__MAX_PER_RECORD: '7', RARETIDE__delivery__batchsize: '50' });
    expect(config.balance?.maxPerRecord).toBe(7);
    expect(config.delivery.batchSize).toBe(50);
  });

  it('reads numbers, booleans and lists as YAML, text verbatim', () => {
    const config = load({
      RARETIDE__TRAINING__HIDDEN: '[64, 32]',
      RARETIDE__SINK__INCLUDE_ORIGINALS: 'true',
      RARETIDE__LOG__LEVEL: 'debug',
      RARETIDE__SOURCE__GROUP: '12345',
    });
    expect(config.training.hidden).toEqual([64, 32]);
    expect(config.sink?.includeOriginals).toBe(true);
    expect(config.log.level).toBe('debug');
    expect(config.source?.group).toBe('12345');
  });

  it('reaches entries of open mappings the file names, and keeps secrets verbatim', () => {
    const text = VALID_YAML.replace('brokers: 127.0.0.1:9092', 'brokers: 127.0.0.1:9092\n  settings: {sasl.password: ""}');
    const config = parseConfig(text, 'raretide.yaml', { env: { RARETIDE__KAFKA__SETTINGS__SASL_PASSWORD: '0123 # not a comment' } });
    expect(config.kafka?.settings).toEqual({ 'sasl.password': '0123 # not a comment' });
    expect(load({ RARETIDE__BALANCE__TARGETS__JAM: '0.1' }).balance?.targets).toEqual({ jam: 0.1, misroute: 0.03 });
  });

  it('merges a mapping value into the mapping in the file', () => {
    const config = load({ RARETIDE__KAFKA__SETTINGS: '{security.protocol: SASL_SSL, sasl.mechanisms: PLAIN}', RARETIDE__BALANCE__TARGETS: '{crush: 0.02}' });
    expect(config.kafka).toEqual({ brokers: '127.0.0.1:9092', settings: { 'security.protocol': 'SASL_SSL', 'sasl.mechanisms': 'PLAIN' } });
    expect(config.balance?.targets).toEqual({ jam: 0.05, misroute: 0.03, crush: 0.02 });
  });

  it('applies shorter paths first, so a whole section can be refined by one entry', () => {
    const config = load({ RARETIDE__RATE_CAP__BURST: '50', RARETIDE__RATECAP: '{perSecond: 10, burst: 20}' });
    expect(config.rateCap).toEqual({ perSecond: 10, burst: 50, whenExceeded: 'wait' });
  });

  it('creates a section the file leaves out', () => {
    const config = parseConfig('training: {epochs: 3}\n', 'raretide.yaml', { env: { RARETIDE__MODEL__DIR: '/var/lib/raretide/model' } });
    expect(config.model?.dir).toBe('/var/lib/raretide/model');
  });

  it('follows the union branch the file picks', () => {
    const config = load({ RARETIDE__SOURCE__FRAMING__SCHEMA_FILE: 'schemas/v2.avsc' });
    expect(config.source?.framing).toEqual({ kind: 'raw', schemaFile: 'schemas/v2.avsc' });
  });

  it('replaces a union mapping that switches kind, and its new entries can then be set', () => {
    const config = load({ RARETIDE__SOURCE__FRAMING: '{kind: registry}', RARETIDE__SOURCE__FRAMING__URL: 'http://127.0.0.1:8081' });
    expect(config.source?.framing).toEqual({ kind: 'registry', url: 'http://127.0.0.1:8081' });
  });

  it('ignores variables without the double-underscore prefix', () => {
    expect(load({ RARETIDE_LOG_LEVEL: 'debug', RARETIDE: 'x' }).log.level).toBe('info');
  });
});
