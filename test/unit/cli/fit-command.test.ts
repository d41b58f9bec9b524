import { mkdtemp, readFile, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { RaretideError } from '../../../config/errors.js';
import { parseConfig } from '../../../config/load.js';
import { knownSchema } from '../../../connector/avro/known-schema.js';
import type { CliContext } from '../../../connector/cli/cli-context.js';
import { registerFit } from '../../../connector/cli/commands/fit.js';
import { EXIT_OK, EXIT_USAGE, runCli } from '../../../connector/cli/program.js';
import { loadTrainedModel } from '../../../model/trained-model.js';
import { DEFAULT_HYPER_PARAMETERS, WEIGHTS_FILE } from '../../../model/vae/index.js';
import { seattleWeatherSchema } from '../../support/open-data/seattle-weather.js';
import { writeSeattleWeatherFile } from '../../support/open-data/weather-file.js';

interface Run {
  readonly code: number;
  readonly stdout: string;
  readonly stderr: string;
}

async function fit(args: readonly string[], context: Partial<CliContext> = {}, onStderr?: (stderr: string) => void): Promise<Run> {
  let stdout = '';
  let stderr = '';
  const full: CliContext = {
    env: {},
    stdout: (text) => (stdout += text),
    stderr: (text) => {
      stderr += text;
      onStderr?.(stderr);
    },
    ...context,
  };
  const code = await runCli(['node', 'raretide', 'fit', ...args], [registerFit], full);
  return { code, stdout, stderr };
}

// A small network and few epochs: these tests check the command, not the model's quality.
const SMALL_TRAINING = 'training: {hidden: [16], latent: 2, batchSize: 256, epochs: 3}\n';

let directory = '';
let weatherFile = '';
let config = '';
beforeAll(async () => {
  directory = await mkdtemp(join(tmpdir(), 'raretide-fit-'));
  // Open data: NOAA Seattle daily weather via vega-datasets, written as an Avro container file.
  weatherFile = await writeSeattleWeatherFile(directory);
  config = join(directory, 'fit.yaml');
  await writeFile(config, `label: {from: field, path: weather}\nmodel: {dir: ${join(directory, 'model')}}\nlog: {format: text}\n${SMALL_TRAINING}`);
});
afterAll(async () => rm(directory, { recursive: true, force: true }));

async function writeConfig(name: string, text: string): Promise<string> {
  const path = join(directory, name);
  await writeFile(path, text);
  return path;
}

describe('raretide fit', () => {
  it('trains on an Avro file and writes a model directory that loads and verifies', async () => {
    const result = await fit(['--config', config, '--file', weatherFile]);
    expect(result.code).toBe(EXIT_OK);
    const modelDirectory = join(directory, 'model');
    const id = /^model ([0-9a-f]{16}) written to (.+)$/m.exec(result.stdout);
    expect(id?.[2]).toBe(modelDirectory);
    expect(result.stdout).toContain('1461 of 1461 records');
    expect(result.stdout).toContain('snow 26');
    expect(result.stderr).toMatch(/^tensor backend: (wasm|cpu|tensorflow)/m);
    expect(result.stderr).toMatch(/^epoch 1\/3 loss [\d.]+ \(recon [\d.-]+, KL [\d.]+, β 0\.00\) val [\d.]+ · [\d.k]+ rows\/s · ETA \d+:\d\d$/m);
    expect(result.stderr).toMatch(/^epoch 3\/3 /m);

    const model = await loadTrainedModel(modelDirectory, { expectedId: id![1]! });
    try {
      expect(model.id).toBe(id![1]);
      expect(model.labelPath).toBe('weather');
      expect(model.classNames).toEqual(['drizzle', 'rain', 'sun', 'snow', 'fog']);
      expect(model.records).toMatchObject({ read: 1461, trained: 1461, missingLabel: 0, unknownLabel: 0 });
      expect(model.records.perClass.snow).toBe(26);
      expect(model.vae.curve).toHaveLength(3);
      // The fingerprint stored is the Avro specification's CRC-64-AVRO of the file's schema.
      const expected = knownSchema(seattleWeatherSchema, 'seattle-weather').fingerprint.hex;
      expect(model.schemaFingerprint).toBe(expected);
      expect(() => model.checkSchema(expected, weatherFile)).not.toThrow();
      expect(model.codec.width).toBe(model.vae.layout.width);
    } finally {
      model.dispose();
    }
  });

  it('refuses a model whose weights were altered, naming the file and the fix', async () => {
    const copy = join(directory, 'corrupt');
    expect((await fit(['--config', config, '--file', weatherFile, '--out', copy, '--quiet'])).code).toBe(EXIT_OK);
    const weights = await readFile(join(copy, WEIGHTS_FILE));
    weights[weights.length - 1]! ^= 0x01;
    await writeFile(join(copy, WEIGHTS_FILE), weights);
    const failure = await loadTrainedModel(copy).catch((error: unknown) => error);
    expect(failure).toBeInstanceOf(RaretideError);
    expect((failure as RaretideError).code).toBe('model.corrupt');
    expect((failure as Error).message).toMatch(/weights\.bin.*sha256.*raretide fit/);
  });

  it('refuses a model fitted on another schema, naming both fingerprints and the fix', async () => {
    const model = await loadTrainedModel(join(directory, 'model'));
    try {
      const other = knownSchema({ ...seattleWeatherSchema, fields: seattleWeatherSchema.fields.slice(0, 5) }, 'other').fingerprint.hex;
      const failure = (() => {
        try {
          model.checkSchema(other, 'topic weather.daily');
        } catch (error) {
          return error as RaretideError;
        }
        return undefined;
      })();
      expect(failure?.code).toBe('model.schema-mismatch');
      expect(failure?.message).toContain(model.schemaFingerprint);
      expect(failure?.message).toContain(other);
      expect(failure?.message).toMatch(/topic weather\.daily.*refit.*readerSchemaFile/);
    } finally {
      model.dispose();
    }
  });

  it('stops after the epoch on Ctrl-C and still writes the model with the best weights', async () => {
    const out = join(directory, 'interrupted');
    let interrupted = false;
    const result = await fit(['--config', config, '--file', weatherFile, '--out', out, '--epochs', '50'], {}, (stderr) => {
      if (!interrupted && stderr.includes('epoch 1/50')) {
        interrupted = true;
        process.emit('SIGINT');
      }
    });
    expect(result.code).toBe(EXIT_OK);
    expect(result.stderr).toMatch(/interrupted: finishing this epoch/);
    expect(result.stdout).toMatch(/ended by abort/);
    expect(process.listenerCount('SIGINT')).toBe(0);
    const model = await loadTrainedModel(out);
    try {
      expect(model.vae.curve.length).toBeLessThan(50);
    } finally {
      model.dispose();
    }
  });

  it('redraws one line on a terminal, logs JSON lines when asked, and is silent with --quiet', async () => {
    const terminal = await fit(['--config', config, '--file', weatherFile, '--out', join(directory, 'tty')], { stderrColumns: 80 });
    expect(terminal.code).toBe(EXIT_OK);
    const pieces = terminal.stderr.split('\r\u001b[2K');
    expect(pieces[1]).toMatch(/^tensor backend: /);
    const redraws = pieces.filter((piece) => piece.startsWith('['));
    expect(redraws).toHaveLength(3);
    expect(redraws[0]).toMatch(/^\[#+\.+\] epoch 1\/3 /);
    for (const line of redraws) expect(line.replace(/\n$/, '').length).toBeLessThanOrEqual(79);

    const json = await fit(['--config', config, '--file', weatherFile, '--out', join(directory, 'json'), '--log-format', 'json']);
    expect(json.code).toBe(EXIT_OK);
    const lines = json.stderr.trim().split('\n').map((line) => JSON.parse(line) as { level: string; message: string; epoch?: number });
    expect(lines.filter((line) => line.message === 'epoch').map((line) => line.epoch)).toEqual([1, 2, 3]);

    const quiet = await fit(['--config', config, '--file', weatherFile, '--out', join(directory, 'quiet'), '--quiet']);
    expect(quiet).toEqual({ code: EXIT_OK, stdout: '', stderr: '' });
  });

  it('refuses to replace a model directory unless --overwrite is given', async () => {
    const refused = await fit(['--config', config, '--file', weatherFile]);
    expect(refused.code).toBe(EXIT_USAGE);
    expect(refused.stderr).toMatch(/already exists: pass --overwrite/);
    const replaced = await fit(['--config', config, '--file', weatherFile, '--overwrite', '--seed', '5', '--quiet']);
    expect(replaced.code).toBe(EXIT_OK);
    expect((await stat(join(directory, 'model'))).isDirectory()).toBe(true);
  });

  it('names the fix for user mistakes (exit 2)', async () => {
    const headerLabel = await writeConfig('header.yaml', `label: {from: header, name: weather}\n${SMALL_TRAINING}`);
    const header = await fit(['--config', headerLabel, '--file', weatherFile, '--out', join(directory, 'unused')]);
    expect(header.code).toBe(EXIT_USAGE);
    expect(header.stderr).toMatch(/label\.from = header: fit needs the class inside the record.*label: \{from: field/);

    const noDirectory = await writeConfig('no-dir.yaml', 'label: {from: field, path: weather}\n');
    expect((await fit(['--config', noDirectory, '--file', weatherFile])).stderr).toMatch(/set model\.dir in the config or pass --out/);
    expect((await fit(['--config', noDirectory, '--out', join(directory, 'unused')])).stderr).toMatch(/pass --file <avro>/);

    const badEpochs = await fit(['--config', config, '--file', weatherFile, '--out', join(directory, 'unused'), '--epochs', 'many']);
    expect(badEpochs.code).toBe(EXIT_USAGE);
    expect(badEpochs.stderr).toMatch(/--epochs = "many": expected a whole number ≥ 1/);

    const noLabel = await writeConfig('no-label.yaml', `model: {dir: ${join(directory, 'unused')}}\n`);
    expect((await fit(['--config', noLabel, '--file', weatherFile])).stderr).toMatch(/label is missing: `raretide fit` needs a label section/);
  });

  it('passes the training section through: its keys and defaults are the model hyper-parameters', () => {
    const training = parseConfig('{}', 'empty.yaml').training;
    for (const [key, value] of Object.entries(training)) {
      expect({ key, value }).toEqual({ key, value: DEFAULT_HYPER_PARAMETERS[key as keyof typeof DEFAULT_HYPER_PARAMETERS] });
    }
  });
});
