/**
 * `raretide regenerate --from-topic` on the real broker: a 3-partition topic of invented sorter events
 * (test/unit/pipeline/support/sorter-events.ts) is replayed to a file; a synthetic record of that file,
 * given by its provenance, is made again from its source record read back from the topic by offset and
 * must equal the file's record byte for byte. The topic is also replayed to an output topic, whose
 * every synthetic record `--verify --out-topic` makes again, before and after a tampered copy is added.
 */
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import { ContainerFileReader } from '../../connector/avro/container/container-reader.js';
import type { CliContext } from '../../connector/cli/cli-context.js';
import { registerRegenerate } from '../../connector/cli/commands/regenerate.js';
import { registerReplay } from '../../connector/cli/commands/replay.js';
import { EXIT_FAILURE, EXIT_OK, EXIT_USAGE, runCli } from '../../connector/cli/program.js';
import { describeTag } from '../../connector/cli/regenerate/tag-input.js';
import { KafkaSnapshotSource } from '../../connector/kafka/snapshot-source.js';
import { PROVENANCE_FIELD_NAME, fromHeaders, fromProvenanceRecord, toHeaders, type SyntheticTag } from '../../connector/pipeline/provenance.js';
import type { InputMessage } from '../../connector/pipeline/source-sink.js';
import { SORTER_EVENT_SCHEMA, sorterSchema } from '../unit/pipeline/support/sorter-events.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { produceSorterTopic, saveTinySorterModel, sorterTopicConfig } from '../support/sorter-topic.js';
import { connectProducer, flushAndDisconnect } from '../support/kafka-clients.js';
import { produceWithBackpressure } from '../support/produce-with-backpressure.js';
import { deleteTopics, uniqueName } from '../support/topics.js';

const brokers = kafkaBrokers();
const PARTITIONS = 3;
const RECORDS = 1500;
let workspace = '';
let sourceTopic = '';
let configFile = '';
let schemaFile = '';
let modelDir = '';
const outputTopics: string[] = [];
let variant: { value: Record<string, unknown>; tag: SyntheticTag } | undefined;

async function cli(command: 'replay' | 'regenerate', args: readonly string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const context: CliContext = { env: {}, stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) };
  const code = await runCli(['node', 'raretide', command, ...args], [registerReplay, registerRegenerate], context);
  return { code, stdout, stderr };
}

/** The record without its provenance field, in the record schema. */
function recordPart(record: Record<string, unknown>): Record<string, unknown> {
  const { [PROVENANCE_FIELD_NAME]: _provenance, ...fields } = record;
  return fields;
}

beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-regenerate-topic-'));
  schemaFile = join(workspace, 'sorter-event.avsc');
  await writeFile(schemaFile, JSON.stringify(SORTER_EVENT_SCHEMA));
  const produced = await produceSorterTopic(brokers, { prefix: 'regenerate-source', partitions: PARTITIONS, records: RECORDS, seed: 41 });
  sourceTopic = produced.topic;
  modelDir = await saveTinySorterModel(produced.events, workspace, { epochs: 3, seed: 7 });
  configFile = join(workspace, 'replay.yaml');
  await writeFile(configFile, sorterTopicConfig({ brokers, sourceTopic, group: 'regenerate-test', schemaFile, modelDir, seed: 9 }));
  const output = join(workspace, 'balanced.avro');
  const replayed = await cli('replay', ['--config', configFile, '--from-topic', '--out', output, '--quiet']);
  expect(replayed, replayed.stderr).toMatchObject({ code: EXIT_OK });
  // A later variant (sample index > 0) of a source record outside partition 0, so partition and sample both matter.
  for await (const value of await ContainerFileReader.open(output)) {
    const record = value as Record<string, unknown>;
    const tag = fromProvenanceRecord(record[PROVENANCE_FIELD_NAME]);
    if (!tag.ok) throw new Error(tag.problem.reason);
    if (tag.value !== null && tag.value.source.partition > 0 && tag.value.sampleIndex > 0) {
      variant = { value: record, tag: tag.value };
      break;
    }
  }
  if (variant === undefined) throw new Error(`${output} holds no later variant of a source record outside partition 0`);
}, 120_000);

afterAll(async () => {
  if (sourceTopic !== '') await deleteTopics(brokers, [sourceTopic, ...outputTopics]).catch(() => undefined);
  await rm(workspace, { recursive: true, force: true });
});

describe('raretide regenerate --from-topic', () => {
  it("remakes a replay output's synthetic record from its source record in the topic, byte for byte", async () => {
    const { value, tag } = variant!;
    const expected = `${sorterSchema.type.toString(recordPart(value))}\n`;
    const result = await cli('regenerate', ['--config', configFile, '--from-topic', '--tag-json', JSON.stringify(value[PROVENANCE_FIELD_NAME]), '--compare', expected]);
    expect(result.code, result.stderr).toBe(EXIT_OK);
    expect(result.stdout).toBe(expected);
    expect(result.stderr).toContain(`${sourceTopic}:${tag.source.partition}@${tag.source.offset} sample ${tag.sampleIndex}`);
    expect(result.stderr).toContain('matches its regeneration byte for byte');
  });

  it('fails naming topic, partition and offset when the topic holds no record there', async () => {
    const { tag } = variant!;
    const headers = Object.assign({}, ...toHeaders({ ...tag, source: { ...tag.source, offset: BigInt(RECORDS) } })) as Record<string, string>;
    const result = await cli('regenerate', ['--config', configFile, '--from-topic', '--tag-json', JSON.stringify(headers)]);
    expect(result.code).toBe(EXIT_FAILURE);
    expect(result.stderr).toContain(`Topic ${sourceTopic} partition ${tag.source.partition} has no record at offset ${RECORDS}`);
  });

  it('refuses --from-topic with --file or --verify', async () => {
    const tagJson = JSON.stringify(variant!.value[PROVENANCE_FIELD_NAME]);
    expect((await cli('regenerate', ['--config', configFile, '--from-topic', '--file', 'in.avro', '--tag-json', tagJson])).code).toBe(EXIT_USAGE);
    expect((await cli('regenerate', ['--config', configFile, '--from-topic', '--verify', '--out', 'out.avro'])).code).toBe(EXIT_USAGE);
  });
});

/** The config of the file replay, writing to `sinkTopic` (dead letters to its own topic). */
async function topicConfigFile(sinkTopic: string): Promise<string> {
  outputTopics.push(sinkTopic, `${sinkTopic}.dead-letter`);
  const path = join(workspace, 'to-topic.yaml');
  await writeFile(path, sorterTopicConfig({ brokers, sourceTopic, group: 'regenerate-test', schemaFile, modelDir, seed: 9, sinkTopic }));
  return path;
}

/** Every record of `topic` as it stands, and the end offset of its partition 0. */
async function readTopic(topic: string): Promise<{ messages: InputMessage[]; endOfPartition0: bigint }> {
  const source = await KafkaSnapshotSource.open({ kafka: { brokers, settings: {} }, topic });
  const messages: InputMessage[] = [];
  try {
    for (let batch = await source.nextBatch(500); batch !== null; batch = await source.nextBatch(500)) messages.push(...batch);
  } finally {
    await source.close();
  }
  return { messages, endOfPartition0: source.spans.find((span) => span.partition === 0)!.end };
}

describe('raretide regenerate --from-topic --verify --out-topic', () => {
  it('passes on a replay output topic, and fails naming a tampered copy of a synthetic record', async () => {
    const outputTopic = uniqueName('regenerate-out');
    const config = await topicConfigFile(outputTopic);
    const replayed = await cli('replay', ['--config', config, '--from-topic', '--to-topic', '--include-originals', '--quiet']);
    expect(replayed.code, replayed.stderr).toBe(EXIT_OK);

    const passed = await cli('regenerate', ['--config', config, '--from-topic', '--verify', '--out-topic', outputTopic]);
    expect(passed.code, passed.stderr).toBe(EXIT_OK);
    const { messages, endOfPartition0 } = await readTopic(outputTopic);
    const synthetic = messages.filter((message) => {
      const tag = fromHeaders(message.headers);
      return tag.ok && tag.value.kind === 'synthetic';
    });
    expect(synthetic.length).toBeGreaterThan(50);
    expect(passed.stdout).toContain(`records: ${messages.length} (${messages.length - synthetic.length} originals, not regenerated); synthetic checked ${synthetic.length}, matched ${synthetic.length}, mismatched 0`);

    // A copy of one synthetic record with the same headers and one byte of its value flipped, appended to partition 0.
    const original = synthetic.find((message) => message.partition > 0) ?? synthetic[0]!;
    const tampered = Buffer.from(original.value);
    tampered[tampered.length - 1]! ^= 0x01;
    const headers = original.headers.flatMap((header) => Object.entries(header).map(([name, value]) => ({ [name]: value.toString() })));
    const producer = await connectProducer({ 'metadata.broker.list': brokers });
    try {
      await produceWithBackpressure(producer, { topic: outputTopic, partition: 0, value: tampered, key: original.key, headers });
    } finally {
      await flushAndDisconnect(producer);
    }

    const failed = await cli('regenerate', ['--config', config, '--from-topic', '--verify', '--out-topic', outputTopic, '--quiet']);
    expect(failed.code).toBe(EXIT_FAILURE);
    const tag = fromHeaders(original.headers);
    if (!tag.ok || tag.value.kind !== 'synthetic') throw new Error('the copied record lost its provenance');
    const named = `record ${outputTopic}:0@${endOfPartition0} (${describeTag(tag.value)})`;
    expect(failed.stdout).toContain(`synthetic checked ${synthetic.length + 1}, matched ${synthetic.length}, mismatched 1`);
    expect(failed.stderr).toContain(`1 of ${synthetic.length + 1} synthetic records of topic ${outputTopic} do not match their regeneration; the first is ${named}`);
  }, 120_000);

  it('needs --out-topic, and leaves out the flags of a file verify', async () => {
    expect((await cli('regenerate', ['--config', configFile, '--from-topic', '--verify'])).code).toBe(EXIT_USAGE);
    expect((await cli('regenerate', ['--config', configFile, '--from-topic', '--verify', '--out-topic', 'x', '--record', '3'])).code).toBe(EXIT_USAGE);
    expect((await cli('regenerate', ['--config', configFile, '--verify', '--out-topic', 'x', '--file', 'in.avro'])).code).toBe(EXIT_USAGE);
  });
});
