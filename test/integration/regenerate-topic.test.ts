/**
 * `raretide regenerate --from-topic` on the real broker: a 3-partition topic of invented sorter events
 * (test/unit/pipeline/support/sorter-events.ts) is replayed to a file; a synthetic record of that file,
 * given by its provenance, is made again from its source record read back from the topic by offset and
 * must equal the file's record byte for byte.
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
import { PROVENANCE_FIELD_NAME, fromProvenanceRecord, toHeaders, type SyntheticTag } from '../../connector/pipeline/provenance.js';
import { SORTER_EVENT_SCHEMA, sorterSchema } from '../unit/pipeline/support/sorter-events.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { produceSorterTopic, saveTinySorterModel } from '../support/sorter-topic.js';
import { deleteTopics } from '../support/topics.js';

const brokers = kafkaBrokers();
const PARTITIONS = 3;
const RECORDS = 1500;
let workspace = '';
let sourceTopic = '';
let configFile = '';
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
  const schemaFile = join(workspace, 'sorter-event.avsc');
  await writeFile(schemaFile, JSON.stringify(SORTER_EVENT_SCHEMA));
  const produced = await produceSorterTopic(brokers, { prefix: 'regenerate-source', partitions: PARTITIONS, records: RECORDS, seed: 41 });
  sourceTopic = produced.topic;
  const modelDir = await saveTinySorterModel(produced.events, workspace, { epochs: 3, seed: 7 });
  configFile = join(workspace, 'replay.yaml');
  await writeFile(
    configFile,
    [
      `kafka: {brokers: "${brokers}"}`,
      'source:',
      `  topic: ${sourceTopic}`,
      '  group: regenerate-test',
      `  framing: {kind: raw, schemaFile: ${schemaFile}}`,
      'label: {from: field, path: outcome}',
      'balance:',
      '  targets: {jam: 0.1, misroute: 0.05}',
      '  maxPerRecord: 5',
      '  seed: 9',
      `model: {dir: ${modelDir}}`,
      '',
    ].join('\n'),
  );
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
  if (sourceTopic !== '') await deleteTopics(brokers, [sourceTopic]).catch(() => undefined);
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
