import { cp, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { knownSchema } from '../../../connector/avro/known-schema.js';
import type { CliContext } from '../../../connector/cli/cli-context.js';
import { registerCheck } from '../../../connector/cli/commands/check.js';
import { registerFit } from '../../../connector/cli/commands/fit.js';
import { EXIT_FAILURE, EXIT_OK, EXIT_USAGE, runCli } from '../../../connector/cli/program.js';
import { WEIGHTS_FILE } from '../../../model/vae/index.js';
import { seattleWeatherSchema } from '../../support/open-data/seattle-weather.js';
import { writeSeattleWeatherFile } from '../../support/open-data/weather-file.js';

interface Run {
  readonly code: number;
  readonly stdout: string;
  readonly stderr: string;
}

async function cli(args: readonly string[]): Promise<Run> {
  let stdout = '';
  let stderr = '';
  const context: CliContext = { env: {}, stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) };
  const code = await runCli(['node', 'raretide', ...args], [registerCheck, registerFit], context);
  return { code, stdout, stderr };
}

// Open data: NOAA Seattle daily weather 2012–2015 via vega-datasets; `snow` is its rare class (26 of 1,461 days).
// A one-epoch, tiny network: these tests check the command, not the model.
let directory = '';
let modelDirectory = '';
let corruptDirectory = '';
let weatherSchemaFile = '';

async function writeConfig(name: string, lines: readonly string[]): Promise<string> {
  const path = join(directory, name);
  await writeFile(path, `${lines.join('\n')}\n`);
  return path;
}

/** A config for the weather model; `source` and `model` lines are the parts the cases vary. */
function weatherConfig(options: { model?: string; schemaFile?: string; readerSchemaFile?: string; targets?: string; labelPath?: string } = {}): string[] {
  return [
    'kafka: {brokers: 127.0.0.1:9092}',
    'source:',
    '  topic: weather.daily',
    '  group: raretide-weather',
    `  framing: {kind: raw, schemaFile: ${options.schemaFile ?? weatherSchemaFile}}`,
    ...(options.readerSchemaFile === undefined ? [] : [`  readerSchemaFile: ${options.readerSchemaFile}`]),
    'sink: {topic: weather.daily.balanced, deadLetterTopic: weather.daily.dead-letter}',
    `label: {from: field, path: ${options.labelPath ?? 'weather'}}`,
    `balance: {targets: ${options.targets ?? '{snow: 0.05}'}}`,
    `model: {dir: ${options.model ?? modelDirectory}}`,
    'training: {hidden: [8], latent: 2, batchSize: 256, epochs: 1}',
    'log: {format: text}',
  ];
}

beforeAll(async () => {
  directory = await mkdtemp(join(tmpdir(), 'raretide-check-'));
  modelDirectory = join(directory, 'model');
  corruptDirectory = join(directory, 'corrupt');
  weatherSchemaFile = join(directory, 'daily-weather.avsc');
  await writeFile(weatherSchemaFile, JSON.stringify(seattleWeatherSchema));
  const history = await writeSeattleWeatherFile(directory);
  const fitted = await cli(['fit', '--config', await writeConfig('fit.yaml', weatherConfig()), '--file', history, '--quiet']);
  expect(fitted.code).toBe(EXIT_OK);
  await cp(modelDirectory, corruptDirectory, { recursive: true });
  const weights = await readFile(join(corruptDirectory, WEIGHTS_FILE));
  weights[0]! ^= 0x01;
  await writeFile(join(corruptDirectory, WEIGHTS_FILE), weights);
}, 120_000);
afterAll(async () => rm(directory, { recursive: true, force: true }));

describe('raretide check with a model', () => {
  it('loads the model, names the schema checks it passed and prints the fitted field policies', async () => {
    const result = await cli(['check', '--config', await writeConfig('ok.yaml', weatherConfig())]);
    expect(result).toMatchObject({ code: EXIT_OK, stderr: '' });
    const out = result.stdout;
    expect(out).toMatch(/^config ok: /);
    expect(out).toContain(`\nmodel ok: ${modelDirectory}\n`);
    expect(out).toMatch(/^ {2}trained on +1461 of 1461 records, classes from field weather$/m);
    // The dataset's class counts (vega-datasets seattle-weather.csv).
    expect(out).toMatch(/^ {2}classes +drizzle 53, rain 641, sun 640, snow 26, fog 101$/m);
    // The fingerprint is the Avro specification's CRC-64-AVRO of the schema the model was fitted on.
    const fingerprint = knownSchema(seattleWeatherSchema, 'seattle-weather').fingerprint.hex;
    expect(out).toMatch(new RegExp(`^ {2}reader +the model's schema ${fingerprint}$`, 'm'));
    expect(out).toMatch(/^ {2}source +source\.framing\.schemaFile .*daily-weather\.avsc resolves to the reader schema$/m);
    expect(out).not.toContain('warning:');
    expect(out).toMatch(/\nfields as fitted:\nfield +type +policy +encoding +width +summary or reason\n/);
    expect(out).toMatch(/^precipitation +double +learn +continuous +1 +min 0 · /m);
    expect(out).toMatch(/^weather +enum test\.raretide\.opendata\.Weather +label +- +0 +classes: drizzle 53, /m);
  });

  it('warns about a label and balance targets the model cannot serve, and still exits 0', async () => {
    const config = await writeConfig('hail.yaml', weatherConfig({ targets: '{snow: 0.05, hail: 0.01}', labelPath: 'sky' }));
    const result = await cli(['check', '--config', config]);
    expect(result.code).toBe(EXIT_OK);
    expect(result.stdout).toMatch(/^warning: label\.path = sky, but the model was fitted with classes from field weather: refit with this label, or set label\.path to the model's$/m);
    expect(result.stdout).toMatch(/^warning: balance\.targets\.hail: the model knows no class hail \(it knows drizzle, rain, sun, snow, fog\).*remove the target$/m);
    expect(result.stdout).not.toMatch(/balance\.targets\.snow/);
  });

  it('a reader schema other than the model\'s: exit 2, one line naming both fingerprints and the fix', async () => {
    const fewer = join(directory, 'fewer-fields.avsc');
    await writeFile(fewer, JSON.stringify({ ...seattleWeatherSchema, fields: seattleWeatherSchema.fields.filter((field) => field.name !== 'wind') }));
    const result = await cli(['check', '--config', await writeConfig('fewer.yaml', weatherConfig({ readerSchemaFile: fewer }))]);
    expect(result.code).toBe(EXIT_USAGE);
    expect(result.stderr.trimEnd().split('\n')).toHaveLength(1);
    expect(result.stderr).toMatch(/^model [0-9a-f]+ \(.*\) was fitted on Avro schema [0-9a-f]{16}, but .*fewer-fields\.avsc has schema [0-9a-f]{16}: refit/);
  });

  it('a writer schema that does not resolve to the reader schema: exit 2, naming the config field', async () => {
    // Avro schema resolution (specification, "Schema Resolution"): a string cannot be read as a double.
    const stringWind = join(directory, 'string-wind.avsc');
    const fields = seattleWeatherSchema.fields.map((field) => (field.name === 'wind' ? { name: 'wind', type: 'string' } : field));
    await writeFile(stringWind, JSON.stringify({ ...seattleWeatherSchema, fields }));
    const result = await cli(['check', '--config', await writeConfig('string-wind.yaml', weatherConfig({ schemaFile: stringWind }))]);
    expect(result.code).toBe(EXIT_USAGE);
    expect(result.stderr).toMatch(/^source\.framing\.schemaFile: .*wind/);
    expect(result.stderr.trimEnd().split('\n')).toHaveLength(1);
  });

  it('a schema file that is not there: exit 2, naming the path and what to fix', async () => {
    const result = await cli(['check', '--config', await writeConfig('missing.yaml', weatherConfig({ schemaFile: join(directory, 'nowhere.avsc') }))]);
    expect(result.code).toBe(EXIT_USAGE);
    expect(result.stderr).toMatch(/^Cannot read Avro schema file .*nowhere\.avsc .*check the schema path in the config\.\n$/);
  });

  it('a corrupt model: exit 1, one line naming the directory, the file and the fix', async () => {
    const result = await cli(['check', '--config', await writeConfig('corrupt.yaml', weatherConfig({ model: corruptDirectory }))]);
    expect(result.code).toBe(EXIT_FAILURE);
    expect(result.stderr).toBe(
      `error: model directory ${corruptDirectory} is corrupt: ${WEIGHTS_FILE} — its sha256 does not match the manifest. Refit the model with \`raretide fit\` (or restore the directory from a copy).\n`,
    );
  });

  it('--no-model skips the model, even a corrupt one', async () => {
    const result = await cli(['check', '--no-model', '--config', await writeConfig('skip.yaml', weatherConfig({ model: corruptDirectory }))]);
    expect(result).toMatchObject({ code: EXIT_OK, stderr: '' });
    expect(result.stdout).toMatch(/^config ok: /);
    expect(result.stdout).not.toMatch(/^model/m);
  });

  it('--quiet prints nothing when config and model are fine', async () => {
    expect(await cli(['--quiet', 'check', '--config', await writeConfig('quiet.yaml', weatherConfig())])).toEqual({ code: EXIT_OK, stdout: '', stderr: '' });
  });
});

describe('raretide check without a model', () => {
  it('says there is none yet and how to make one, exit 0', async () => {
    const absent = join(directory, 'not-fitted-yet');
    const config = await writeConfig('absent.yaml', weatherConfig({ model: absent }));
    const result = await cli(['check', '--config', config]);
    expect(result).toMatchObject({ code: EXIT_OK, stderr: '' });
    expect(result.stdout).toContain(`\nmodel: none in ${absent} yet; \`raretide fit --config ${config}\` makes one from source.topic (or --file <history.avro>); run needs it\n`);
  });

  it('a config without a model section prints the summary only', async () => {
    const result = await cli(['check', '--config', await writeConfig('no-model.yaml', ['label: {from: field, path: weather}'])]);
    expect(result.code).toBe(EXIT_OK);
    expect(result.stdout).toMatch(/^ {2}model +— \(not set\)$/m);
    expect(result.stdout).not.toMatch(/^model/m);
  });
});
