import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { registerFit } from '../../connector/cli/commands/fit.js';
import { registerInspect } from '../../connector/cli/commands/inspect.js';
import type { CliContext, RegisterCommand } from '../../connector/cli/cli-context.js';
import { EXIT_OK, runCli } from '../../connector/cli/program.js';
import { loadTrainedModel } from '../../model/trained-model.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { connectProducer, flushAndDisconnect } from '../support/kafka-clients.js';
import { seattleWeatherRows, seattleWeatherSchema, seattleWeatherType } from '../support/open-data/seattle-weather.js';
import { produceWithBackpressure } from '../support/produce-with-backpressure.js';
import { createUniqueTopic } from '../support/topics.js';

async function cli(commands: readonly RegisterCommand[], args: readonly string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const context: CliContext = { env: {}, stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) };
  const code = await runCli(['node', 'raretide', ...args], commands, context);
  return { code, stdout, stderr };
}

let directory = '';
let config = '';
const rows = seattleWeatherRows();

// Open data: NOAA Seattle daily weather (via vega-datasets), raw Avro on a 3-partition topic, read back
// by `inspect` and `fit` as a snapshot (earliest → end offsets taken at start).
beforeAll(async () => {
  const brokers = kafkaBrokers();
  directory = await mkdtemp(join(tmpdir(), 'raretide-topic-sample-'));
  const topic = await createUniqueTopic(brokers, { prefix: 'weather', partitions: 3 });
  const producer = await connectProducer({ 'metadata.broker.list': brokers });
  for (const row of rows) await produceWithBackpressure(producer, { topic, value: seattleWeatherType.toBuffer(row) });
  await flushAndDisconnect(producer);

  const schemaFile = join(directory, 'weather.avsc');
  await writeFile(schemaFile, JSON.stringify(seattleWeatherSchema));
  config = join(directory, 'raretide.yaml');
  await writeFile(
    config,
    [
      `kafka: {brokers: "${brokers}"}`,
      `source: {topic: ${topic}, group: raretide-test, framing: {kind: raw, schemaFile: ${JSON.stringify(schemaFile)}}}`,
      'label: {from: field, path: weather}',
      `model: {dir: ${JSON.stringify(join(directory, 'model'))}}`,
      'training: {epochs: 2}',
      '',
    ].join('\n'),
  );
});
afterAll(async () => rm(directory, { recursive: true, force: true }));

describe('inspect and fit read a topic snapshot when no file is given', () => {
  it('inspect samples the whole topic across its partitions', async () => {
    const result = await cli([registerInspect], ['inspect', '--config', config, '--json']);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(EXIT_OK);
    const table = JSON.parse(result.stdout) as { sampleSize: number; labelPath: string };
    expect(table).toMatchObject({ sampleSize: rows.length, labelPath: 'weather' });
  });

  it('inspect stops at --sample records', async () => {
    const result = await cli([registerInspect], ['inspect', '--config', config, '--json', '--sample', '100']);
    expect(result.code).toBe(EXIT_OK);
    expect((JSON.parse(result.stdout) as { sampleSize: number }).sampleSize).toBe(100);
  });

  it('fit trains on the snapshot and writes a model that loads and verifies', async () => {
    const result = await cli([registerFit], ['--quiet', 'fit', '--config', config]);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(EXIT_OK);
    const model = await loadTrainedModel(join(directory, 'model'));
    expect(model.codec.classes).toContain('snow');
  });
});
