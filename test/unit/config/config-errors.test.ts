import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { UsageError } from '../../../config/errors.js';
import { loadConfigFile, parseConfig } from '../../../config/load.js';
import { configErrorOf, configErrorOfAsync, VALID_YAML } from './helpers.js';

/**
 * One kind of config mistake per row. Each must give exactly one line that names the path, shows the
 * bad value (with its kind) and says what to write instead.
 */
interface MistakeCase {
  readonly name: string;
  readonly text: string;
  readonly env?: Record<string, string>;
  readonly fileName?: string;
  /** Fragments the one-line message must contain, in order. */
  readonly says: readonly string[];
}

const replace = (from: string, to: string): string => {
  if (!VALID_YAML.includes(from)) throw new Error(`test setup: ${from} not in VALID_YAML`);
  return VALID_YAML.replace(from, to);
};

const MISTAKES: readonly MistakeCase[] = [
  {
    name: 'unknown key, with a did-you-mean',
    text: replace('targets:', 'tagets:'),
    says: ['balance.tagets = {"jam":0.05,"misroute":0.03} (mapping)', 'unknown key', 'did you mean "targets"?'],
  },
  {
    name: 'unknown section, with a did-you-mean',
    text: `${VALID_YAML}metrix: {port: 9000}\n`,
    says: ['metrix = {"port":9000} (mapping)', 'unknown section', 'did you mean "metrics"?'],
  },
  {
    name: 'key in the wrong case',
    text: `${VALID_YAML}log: {Level: debug}\n`,
    says: ['log.Level = "debug" (string)', 'did you mean "level"?'],
  },
  {
    name: 'unknown key with nothing close: the allowed keys are listed',
    text: `${VALID_YAML}rateCap: {perSecond: 10, burst: 20, xyz: 1}\n`,
    says: ['rateCap.xyz = 1 (number)', 'unknown key; expected one of: perSecond, burst, whenExceeded'],
  },
  {
    name: 'wrong type',
    text: `${VALID_YAML}delivery: {batchSize: lots}\n`,
    says: ['delivery.batchSize = "lots" (string)', 'expected an integer ≥ 1', 'e.g. 500'],
  },
  {
    name: 'a fraction where an integer belongs',
    text: `${VALID_YAML}training: {latent: 2.5}\n`,
    says: ['training.latent = 2.5 (number)', 'expected an integer ≥ 1'],
  },
  {
    name: 'share out of range',
    text: replace('jam: 0.05', 'jam: 1.5'),
    says: ['balance.targets.jam = 1.5 (number)', 'expected a share between 0 and 1 (exclusive), e.g. 0.05'],
  },
  {
    name: 'target shares summing to 1 or more',
    text: replace('{jam: 0.05, misroute: 0.03}', '{jam: 0.6, misroute: 0.4}'),
    says: ['balance.targets = {"jam":0.6,"misroute":0.4} (mapping)', 'sum to 1', 'must sum to less than 1', 'lower some targets'],
  },
  {
    name: 'bad enum value',
    text: `${VALID_YAML}delivery: {guarantee: exactly-twice}\n`,
    says: ['delivery.guarantee = "exactly-twice" (string)', 'expected one of "at-least-once" or "exactly-once"'],
  },
  {
    name: 'unknown union kind',
    text: replace('kind: raw', 'kind: avro'),
    says: ['source.framing.kind = "avro" (string)', 'expected kind: "raw", "single-object" or "registry"'],
  },
  {
    name: 'missing required field in a union branch',
    text: replace('{kind: raw, schemaFile: schemas/sorter-event.avsc}', '{kind: raw}'),
    says: ['source.framing.schemaFile is missing', 'expected a non-empty string', 'e.g. schemas/reading.avsc'],
  },
  {
    name: 'missing discriminator',
    text: replace('{from: field, path: outcome}', '{path: outcome}'),
    says: ['label.from is missing', 'expected from: "field", "header" or "key"'],
  },
  {
    name: 'missing required field',
    text: replace('  group: raretide-sorter\n', ''),
    says: ['source.group is missing', 'expected a non-empty string'],
  },
  {
    name: 'malformed broker list',
    text: replace('brokers: 127.0.0.1:9092', 'brokers: localhost'),
    says: ['kafka.brokers = "localhost" (string)', 'expected a comma-separated host:port list, e.g. 127.0.0.1:9092'],
  },
  {
    name: 'illegal Kafka topic name',
    text: replace('topic: sorter.events.balanced', 'topic: "sorter events"'),
    says: ['sink.topic = "sorter events" (string)', 'expected a Kafka topic name'],
  },
  {
    name: 'sink topic equal to the source topic',
    text: replace('topic: sorter.events.balanced', 'topic: sorter.events'),
    says: ['sink.topic = "sorter.events" (string)', 'consume its own output', 'choose another topic'],
  },
  {
    name: 'a librdkafka property that raretide owns',
    text: replace('brokers: 127.0.0.1:9092', 'brokers: 127.0.0.1:9092\n  settings: {group.id: other}'),
    says: ['kafka.settings["group.id"] = "other" (string)', 'set source.group instead'],
  },
  {
    name: 'field override key that is not a field path',
    text: `${VALID_YAML}fields: {"parcel id": copy}\n`,
    says: ['fields["parcel id"]', 'invalid key "parcel id"', 'expected a dotted path of Avro field names'],
  },
  {
    name: 'URL with the wrong scheme',
    text: replace('{kind: raw, schemaFile: schemas/sorter-event.avsc}', '{kind: registry, url: "ftp://registry"}'),
    says: ['source.framing.url = "ftp://registry" (string)', 'expected an http(s) URL, e.g. http://127.0.0.1:8081'],
  },
  {
    name: 'long value truncated',
    text: `${VALID_YAML}log: {level: "${'x'.repeat(100)}"}\n`,
    says: ['log.level = "xxxxxxxx', '…" (string)', 'expected one of "error", "warn", "info" or "debug"'],
  },
  {
    name: 'malformed YAML, with line and column',
    text: `${VALID_YAML}rateCap:\n  perSecond: 10\n burst: 20\n`,
    says: ['raretide.yaml line 17, column 1', 'YAML syntax'],
  },
  {
    name: 'duplicate YAML key',
    text: `${VALID_YAML}log: {level: info}\nlog: {level: debug}\n`,
    says: ['raretide.yaml line 16, column 1', 'Map keys must be unique'],
  },
  {
    name: 'malformed JSON',
    fileName: 'raretide.json',
    text: '{"balance": {"targets": {"jam": 0.05,}}}',
    says: ['raretide.json', 'JSON syntax'],
  },
  {
    name: 'empty file',
    text: '   \n# nothing but a comment\n',
    says: ['raretide.yaml is empty', 'expected a mapping of sections'],
  },
  {
    name: 'top level that is not a mapping',
    text: '- kafka\n- source\n',
    says: ['the top level is a list', 'expected a mapping of sections'],
  },
  {
    name: 'environment override with a bad value',
    text: VALID_YAML,
    env: { RARETIDE__BALANCE__SEED: 'abc' },
    says: ['balance.seed = "abc" (string, from RARETIDE__BALANCE__SEED)', 'expected an integer from 0 to 4294967295'],
  },
  {
    name: 'environment override with a bad path',
    text: VALID_YAML,
    env: { RARETIDE__BALANCE__TARGETZ__JAM: '0.1' },
    says: ['RARETIDE__BALANCE__TARGETZ__JAM="0.1"', 'balance has no key matching "TARGETZ"', 'did you mean RARETIDE__BALANCE__TARGETS__JAM?'],
  },
  {
    name: 'environment override of an entry the file does not name',
    text: VALID_YAML,
    env: { RARETIDE__KAFKA__SETTINGS__SASL_PASSWORD: 'Pw-in-env-3b1f' },
    // A variable naming a credential is never echoed (the reliability suite's security scenario found it was).
    says: ['RARETIDE__KAFKA__SETTINGS__SASL_PASSWORD=[redacted]', 'kafka.settings has no entry matching', "RARETIDE__KAFKA__SETTINGS='{<key>: <value>}'"],
  },
  {
    name: 'a credential of the wrong kind in the file',
    text: replace('  brokers: 127.0.0.1:9092', '  brokers: 127.0.0.1:9092\n  settings: {sasl.password: [Pw-in-file-77c2]}'),
    says: ['kafka.settings["sasl.password"] = [redacted] (list)', 'expected a string, number or boolean'],
  },
  {
    name: 'environment override below a scalar',
    text: VALID_YAML,
    env: { RARETIDE__BALANCE__SEED__X: '1' },
    says: ['RARETIDE__BALANCE__SEED__X="1"', 'balance.seed holds an integer from 0 to 4294967295, not a mapping', 'end the variable name at balance.seed'],
  },
  {
    name: 'environment override with malformed YAML',
    text: VALID_YAML,
    env: { RARETIDE__TRAINING__HIDDEN: '[64, 64' },
    says: ['RARETIDE__TRAINING__HIDDEN="[64, 64"', 'not a YAML value', 'expected list of integer ≥ 1'],
  },
];

describe('config mistakes give one line naming path, value and fix', () => {
  it.each(MISTAKES)('$name', ({ text, env, fileName, says }) => {
    const error = configErrorOf(() => parseConfig(text, fileName ?? 'raretide.yaml', { env: env ?? {} }));
    expect(error).toBeInstanceOf(UsageError);
    expect(error.code).toBe('config.invalid');
    expect(error.problems).toHaveLength(1);
    expect(error.message.split('\n')).toHaveLength(1);
    expect(error.message.startsWith('config error: ')).toBe(true);
    expect(error.message).not.toContain('Pw-in-');
    let from = 0;
    for (const fragment of says) {
      const at = error.message.indexOf(fragment, from);
      expect(at, `"${fragment}" (in order) in: ${error.message}`).toBeGreaterThanOrEqual(0);
      from = at + fragment.length;
    }
  });

  it('reports every problem of a file, one line each', () => {
    const text = replace('jam: 0.05', 'jam: 2').replace('brokers: 127.0.0.1:9092', 'brokers: nowhere');
    const error = configErrorOf(() => parseConfig(`${text}metrix: {}\n`, 'raretide.yaml'));
    expect(error.problems.map((problem) => problem.path).sort()).toEqual(['balance.targets.jam', 'kafka.brokers', 'metrix']);
    expect(error.message.split('\n')).toHaveLength(3);
  });

  it('reports a misspelt required key once, as the unknown key', () => {
    const error = configErrorOf(() => parseConfig(replace('deadLetterTopic:', 'deadLeterTopic:'), 'raretide.yaml'));
    expect(error.problems.map((problem) => problem.code)).toEqual(['unknown_key']);
  });
});

describe('config files', () => {
  let directory = '';
  beforeAll(async () => {
    directory = await mkdtemp(join(tmpdir(), 'raretide-config-'));
  });
  afterAll(async () => {
    await rm(directory, { recursive: true, force: true });
  });

  it('a file that does not exist names the path and the flag to fix', async () => {
    const missing = join(directory, 'absent.yaml');
    const error = await configErrorOfAsync(() => loadConfigFile(missing));
    expect(error.message).toBe(`config error: cannot read ${missing}: no such file; check the --config path`);
  });

  it('a directory is not a config file', async () => {
    const path = join(directory, 'configs.yaml');
    await mkdir(path);
    const error = await configErrorOfAsync(() => loadConfigFile(path));
    expect(error.message).toBe(`config error: cannot read ${path}: it is a directory; give the path of a .yaml or .json file`);
  });

  it('an unknown extension says which ones work', async () => {
    const path = join(directory, 'raretide.toml');
    await writeFile(path, 'a = 1\n');
    const error = await configErrorOfAsync(() => loadConfigFile(path));
    expect(error.message).toBe(`config error: ${path}: unknown file type ".toml"; use a .yaml, .yml or .json file`);
  });

  it('an empty file on disk is reported as empty', async () => {
    const path = join(directory, 'empty.yml');
    await writeFile(path, '');
    const error = await configErrorOfAsync(() => loadConfigFile(path));
    expect(error.message).toBe(`config error: ${path} is empty; expected a mapping of sections such as kafka, source, sink, balance (see config/examples/minimal.yaml)`);
  });
});
