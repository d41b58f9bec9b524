/**
 * Scenario 6: bad files given to the real CLI — a model directory with altered weights or a missing
 * manifest, an input of another schema, a truncated Avro container file, a config that is a directory
 * or random bytes, and a worker whose schema file is not the model's. Each must end with a message
 * naming the culprit, a non-zero exit code (2 for what the user must fix in the command or config, 1
 * otherwise), and no output: the output directory stays empty (no partial file, no temp file), and the
 * worker creates no topic.
 */
import { randomBytes } from 'node:crypto';
import { cp, mkdir, readdir, readFile, stat, truncate, unlink, writeFile } from 'node:fs/promises';
import { join } from 'node:path';

import Kafka from 'node-rdkafka';

import { knownSchema, type KnownSchema } from '../../connector/avro/known-schema.js';
import { ContainerFileWriter } from '../../connector/avro/container/container-writer.js';
import { MANIFEST_FILE, WEIGHTS_FILE } from '../../model/vae/index.js';
import { pumpStationReadings, pumpStationReadingSchema } from '../support/pump-station-telemetry.js';
import { sorterEvents, sorterSchema, writeRunConfig } from '../support/run-worker-scenario.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import { CleanupStack } from './cleanup-stack.js';
import { runCliProcess, type CliRun } from './cli-process.js';
import { RowRecorder, type ScenarioRow, type ScenarioSize } from './scenario-row.js';
import type { SuiteContext } from './suite-context.js';

interface BadFileCase {
  readonly name: string;
  readonly args: readonly string[];
  /**
   * 1 (runtime failure) or 2 (usage or config error: a file the user must fix or replace, such as a
   * config or an input that does not fit the model's schema), as connector/cli/program.ts defines them.
   */
  readonly exitCode: 1 | 2;
  /** What the message must say: the culprit, by name. */
  readonly message: RegExp;
  /** Where output would have gone; must be empty afterwards. */
  readonly outputDir: string;
  /** Topics that must not exist afterwards. */
  readonly topicsNotCreated?: readonly string[];
}

/** One case of each kind, for the CI size. */
const SHORT_CASES = ['model weights altered', 'input of another schema', 'truncated Avro file', 'config is a directory'];

/** Cases run two at a time (2 cores). */
const PARALLEL = 2;

export async function badFiles(context: SuiteContext, size: ScenarioSize): Promise<ScenarioRow> {
  const row = new RowRecorder('6 bad files', 'corrupt model dir, wrong schema, truncated Avro file, unreadable config → message naming the culprit, non-zero exit, no output or temp file, no topic');
  const cleanup = new CleanupStack();
  try {
    const cases = await prepareCases(context, size, cleanup);
    const results: { readonly badCase: BadFileCase; readonly run: CliRun }[] = [];
    for (let first = 0; first < cases.length; first += PARALLEL) {
      const slice = cases.slice(first, first + PARALLEL);
      results.push(...(await Promise.all(slice.map(async (badCase) => ({ badCase, run: await runCliProcess(badCase.args, { timeoutMs: 120_000 }) })))));
    }
    const existing = await topicNames(context.brokers);
    for (const { badCase, run } of results) {
      const lastLine = run.stderr.trim().split('\n').pop() ?? '';
      row.check(`${badCase.name}: exit ${badCase.exitCode}`, run.code === badCase.exitCode, `exit ${run.code ?? run.signal}: ${lastLine.slice(0, 300)}`);
      row.check(`${badCase.name}: message names the culprit`, badCase.message.test(run.stderr), lastLine.slice(0, 300));
      const left = await readdir(badCase.outputDir);
      row.check(`${badCase.name}: nothing left in the output directory`, left.length === 0, left.join(', '));
      const created = (badCase.topicsNotCreated ?? []).filter((topic) => existing.has(topic));
      row.check(`${badCase.name}: no topic created`, created.length === 0, created.join(', '));
    }
    row.count('cases', cases.length);
    row.count('exit codes', results.map(({ run }) => run.code ?? run.signal).join(' '));
  } catch (error) {
    row.fail(error);
  } finally {
    for (const problem of await cleanup.close()) row.fail(problem);
  }
  return row.finish();
}

async function prepareCases(context: SuiteContext, size: ScenarioSize, cleanup: CleanupStack): Promise<BadFileCase[]> {
  const dir = join(context.dir, 'bad-files');
  await mkdir(dir, { recursive: true });
  const records = size === 'full' ? 20_000 : 2_000;
  const goodInput = join(dir, 'sorter-history.avro');
  await writeContainer(goodInput, sorterSchema, sorterEvents(records, { jam: 0.03, misroute: 0.03 }, context.seed + 50));
  // Cut inside a block, as a copy that stopped half way would be.
  const truncated = join(dir, 'sorter-history-truncated.avro');
  await cp(goodInput, truncated);
  await truncate(truncated, Math.floor((await stat(goodInput)).size / 2));
  const otherSchema = join(dir, 'pump-readings.avro');
  const reading = pumpStationReadings(context.seed + 51);
  await writeContainer(otherSchema, knownSchema(pumpStationReadingSchema, 'pump-station-reading.avsc'), Array.from({ length: 500 }, (_, index) => reading(index)));

  const corruptWeights = join(dir, 'model-corrupt-weights');
  await cp(context.modelDir, corruptWeights, { recursive: true });
  const weights = await readFile(join(corruptWeights, WEIGHTS_FILE));
  weights.fill(0x7f, weights.length >> 1, (weights.length >> 1) + 64);
  await writeFile(join(corruptWeights, WEIGHTS_FILE), weights);
  const noManifest = join(dir, 'model-no-manifest');
  await cp(context.modelDir, noManifest, { recursive: true });
  await unlink(join(noManifest, MANIFEST_FILE));

  const replayConfig = async (name: string, modelDir: string) => {
    const path = join(dir, `${name}.json`);
    await writeFile(path, JSON.stringify({ label: { from: 'field', path: 'outcome' }, balance: { targets: { jam: 0.06, misroute: 0.06 }, maxPerRecord: 5, seed: 3 }, model: { dir: modelDir } }));
    return path;
  };
  const goodConfig = await replayConfig('replay', context.modelDir);
  const fitConfig = join(dir, 'fit.json');
  await writeFile(fitConfig, JSON.stringify({ label: { from: 'field', path: 'outcome' }, training: { hidden: [16], latent: 2, epochs: 2, batchSize: 256 } }));
  const directoryConfig = join(dir, 'config-directory.yaml');
  await mkdir(directoryConfig);
  const garbageConfig = join(dir, 'garbage.yaml');
  await writeFile(garbageConfig, randomBytes(512));

  // The worker case: a source topic that exists, and a schema file the model was not fitted on.
  const pumpSchemaFile = join(dir, 'pump-station-reading.avsc');
  await writeFile(pumpSchemaFile, JSON.stringify(pumpStationReadingSchema));
  const source = await createUniqueTopic(context.brokers, { prefix: 'rel-badfile-src', partitions: 1 });
  cleanup.defer('the bad-files source topic', () => deleteTopics(context.brokers, [source]));
  const topics = { source, output: uniqueName('rel-badfile-out'), deadLetter: uniqueName('rel-badfile-dlq'), group: uniqueName('rel-badfile-group') };
  const runConfig = await writeRunConfig(dir, 'run-wrong-schema', { brokers: context.brokers, topics, schemaFile: pumpSchemaFile, modelDir: context.modelDir, targets: { jam: 0.06 } });

  const outputDir = async (name: string) => {
    const path = join(dir, `out-${name}`);
    await mkdir(path);
    return path;
  };
  const replay = async (name: string, config: string, input: string, message: RegExp, exitCode: 1 | 2): Promise<BadFileCase> => {
    const out = await outputDir(name);
    return { name, args: ['replay', '--config', config, '--file', input, '--out', join(out, 'balanced.avro')], exitCode, message, outputDir: out };
  };
  const fitOut = await outputDir('fit-truncated');
  const runOut = await outputDir('run-wrong-schema');
  const cases: BadFileCase[] = [
    await replay('model weights altered', await replayConfig('replay-corrupt', corruptWeights), goodInput, new RegExp(WEIGHTS_FILE.replace('.', '\\.')), 1),
    await replay('model manifest missing', await replayConfig('replay-no-manifest', noManifest), goodInput, new RegExp(MANIFEST_FILE.replace('.', '\\.')), 1),
    await replay('input of another schema', goodConfig, otherSchema, /pump-readings\.avro.*schema/i, 2),
    await replay('truncated Avro file', goodConfig, truncated, /truncated|corrupt/i, 1),
    { name: 'fit on a truncated Avro file', args: ['fit', '--config', fitConfig, '--file', truncated, '--out', join(fitOut, 'model')], exitCode: 1, message: /truncated|corrupt/i, outputDir: fitOut },
    await replay('config is a directory', directoryConfig, goodInput, /directory/i, 2),
    await replay('config of random bytes', garbageConfig, goodInput, /garbage\.yaml/, 2),
    {
      name: 'worker with a schema the model was not fitted on',
      args: ['run', '--config', runConfig, '--instance-id', 'bad-schema-0'],
      exitCode: 2,
      message: /pump-station-reading\.avsc.*schema/i,
      outputDir: runOut,
      topicsNotCreated: [topics.output, topics.deadLetter, `raretide-state.${topics.group}`],
    },
  ];
  return size === 'full' ? cases : cases.filter((badCase) => SHORT_CASES.includes(badCase.name));
}

async function writeContainer(path: string, schema: KnownSchema, records: readonly unknown[]): Promise<void> {
  const writer = await ContainerFileWriter.create(path, { schema, codec: 'deflate', blockSizeBytes: 16_384 });
  for (const record of records) await writer.append(record);
  await writer.close();
}

/** Every topic on the cluster (a metadata request for all topics never creates one). */
async function topicNames(brokers: string): Promise<Set<string>> {
  const producer = new Kafka.Producer({ 'metadata.broker.list': brokers });
  await new Promise<void>((resolve, reject) => producer.connect({ timeout: 30_000 }, (error) => (error ? reject(new Error(`metadata: ${error.message}`)) : resolve())));
  try {
    const metadata = await new Promise<Kafka.Metadata>((resolve, reject) => producer.getMetadata({ timeout: 30_000 }, (error, answer) => (error ? reject(new Error(`metadata: ${error.message}`)) : resolve(answer))));
    return new Set(metadata.topics.map((topic) => topic.name));
  } finally {
    await new Promise<void>((resolve) => producer.disconnect(() => resolve()));
  }
}
