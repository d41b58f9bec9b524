/**
 * `raretide replay` with a topic as input and as output, on the real broker: a 3-partition topic of
 * invented sorter events (test/unit/pipeline/support/sorter-events.ts) replayed to a file twice gives
 * identical bytes, and to two output topics gives identical record sequences per partition.
 */
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

import type { CliContext } from '../../connector/cli/cli-context.js';
import { registerReplay } from '../../connector/cli/commands/replay.js';
import { EXIT_OK, EXIT_USAGE, runCli } from '../../connector/cli/program.js';
import type { ReplaySummary } from '../../connector/cli/replay/replay-summary.js';
import { KafkaSnapshotSource } from '../../connector/kafka/snapshot-source.js';
import { SORTER_EVENT_SCHEMA } from '../unit/pipeline/support/sorter-events.js';
import { kafkaBrokers } from '../support/kafka-brokers.js';
import { produceSorterTopic, saveTinySorterModel, sorterTopicConfig } from '../support/sorter-topic.js';
import { deleteTopics, uniqueName } from '../support/topics.js';

const brokers = kafkaBrokers();
const PARTITIONS = 3;
const RECORDS = 3000;
const TARGETS = { jam: 0.1, misroute: 0.05 };
const createdTopics: string[] = [];
let workspace = '';
let sourceTopic = '';
let modelDir = '';
let schemaFile = '';

async function replay(args: readonly string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const context: CliContext = { env: {}, stdout: (text) => (stdout += text), stderr: (text) => (stderr += text) };
  const code = await runCli(['node', 'raretide', 'replay', ...args], [registerReplay], context);
  return { code, stdout, stderr };
}

/** A config replaying `sourceTopic`, writing to `sinkTopic` (and its own dead-letter topic). */
async function configFile(name: string, sinkTopic: string): Promise<string> {
  createdTopics.push(sinkTopic, `${sinkTopic}.dead-letter`);
  const path = join(workspace, `${name}.yaml`);
  await writeFile(path, sorterTopicConfig({ brokers, sourceTopic, group: 'replay-test', schemaFile, modelDir, seed: 3, sinkTopic }));
  return path;
}

/** Values of each partition of `topic`, in offset order. */
async function valuesPerPartition(topic: string): Promise<string[][]> {
  const kafka = { brokers, settings: {} };
  const perPartition: string[][] = [];
  for (let partition = 0; partition < PARTITIONS; partition++) {
    const source = await KafkaSnapshotSource.open({ kafka, topic, partitions: [partition] });
    const values: string[] = [];
    try {
      for (let batch = await source.nextBatch(500); batch !== null; batch = await source.nextBatch(500)) {
        for (const message of batch) values.push(`${message.key?.toString() ?? ''}:${message.value.toString('hex')}`);
      }
    } finally {
      await source.close();
    }
    perPartition.push(values);
  }
  return perPartition;
}

beforeAll(async () => {
  workspace = await mkdtemp(join(tmpdir(), 'raretide-replay-topic-'));
  schemaFile = join(workspace, 'sorter-event.avsc');
  await writeFile(schemaFile, JSON.stringify(SORTER_EVENT_SCHEMA));
  const produced = await produceSorterTopic(brokers, { prefix: 'replay-source', partitions: PARTITIONS, records: RECORDS, seed: 21 });
  sourceTopic = produced.topic;
  createdTopics.push(sourceTopic);
  // The tiny model of test/unit/cli/replay-command.test.ts.
  modelDir = await saveTinySorterModel(produced.events, workspace, { epochs: 4, seed: 3 });
});

afterAll(async () => {
  if (createdTopics.length > 0) await deleteTopics(brokers, createdTopics).catch(() => undefined);
  await rm(workspace, { recursive: true, force: true });
});

describe('raretide replay --from-topic', () => {
  it('writes byte-identical files from a 3-partition topic, meeting each target within ±0.5 pp', async () => {
    const config = await configFile('to-file', uniqueName('replay-unused'));
    const first = join(workspace, 'balanced-1.avro');
    const second = join(workspace, 'balanced-2.avro');
    const runs = [
      await replay(['--config', config, '--from-topic', '--out', first, '--include-originals']),
      await replay(['--config', config, '--from-topic', '--out', second, '--include-originals', '--quiet']),
    ];
    expect(runs.map((run) => run.code), runs.map((run) => run.stderr).join('\n')).toEqual([EXIT_OK, EXIT_OK]);
    const [a, b] = await Promise.all([readFile(first), readFile(second)]);
    expect(a.length).toBeGreaterThan(10_000);
    expect(a.equals(b)).toBe(true);

    const summary = JSON.parse(await readFile(`${first}.summary.json`, 'utf8')) as ReplaySummary;
    expect(summary.input).toBe(`topic ${sourceTopic}`);
    expect(summary.records.read).toBe(RECORDS);
    for (const [label, target] of Object.entries(TARGETS)) {
      const entry = summary.classes.find((candidate) => candidate.label === label)!;
      expect(Math.abs(entry.after.share - target)).toBeLessThan(0.005);
    }
  });

  it('starts at an offset in every partition', async () => {
    const config = await configFile('from-offset', uniqueName('replay-unused'));
    const out = join(workspace, 'from-offset.avro');
    const result = await replay(['--config', config, '--from-topic', '--start-offset', '900', '--out', out, '--quiet']);
    expect(result.code, result.stderr).toBe(EXIT_OK);
    const summary = JSON.parse(await readFile(`${out}.summary.json`, 'utf8')) as ReplaySummary;
    expect(summary.records.read).toBe(RECORDS - PARTITIONS * 900);
  });

  it('rejects a start without --from-topic, and two inputs', async () => {
    const config = await configFile('usage', uniqueName('replay-unused'));
    expect((await replay(['--config', config, '--file', 'x.avro', '--start-offset', '3', '--out', 'y.avro'])).code).toBe(EXIT_USAGE);
    expect((await replay(['--config', config, '--file', 'x.avro', '--from-topic', '--out', 'y.avro'])).code).toBe(EXIT_USAGE);
  });
});

describe('raretide replay --from-topic --to-topic', () => {
  it('writes identical record sequences per partition into two output topics', async () => {
    const topics = [uniqueName('replay-out-a'), uniqueName('replay-out-b')];
    const summaryPath = join(workspace, 'to-topic.summary.json');
    const runs = [
      await replay(['--config', await configFile('to-topic-a', topics[0]!), '--from-topic', '--to-topic', '--include-originals', '--summary', summaryPath, '--quiet']),
      await replay(['--config', await configFile('to-topic-b', topics[1]!), '--from-topic', '--to-topic', '--include-originals']),
    ];
    expect(runs.map((run) => run.code), runs.map((run) => run.stderr).join('\n')).toEqual([EXIT_OK, EXIT_OK]);
    expect(runs[1]!.stdout).toContain(`topic ${topics[1]}`);
    const summary = JSON.parse(await readFile(summaryPath, 'utf8')) as ReplaySummary;
    const [a, b] = [await valuesPerPartition(topics[0]!), await valuesPerPartition(topics[1]!)];
    expect(a.map((values) => values.length).reduce((sum, length) => sum + length, 0)).toBe(summary.records.written);
    expect(summary.records.synthetic).toBeGreaterThan(100);
    for (let partition = 0; partition < PARTITIONS; partition++) {
      expect(a[partition]!.length).toBeGreaterThan(0);
      expect(b[partition]).toEqual(a[partition]);
    }
  });
});
